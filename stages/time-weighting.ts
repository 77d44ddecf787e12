// Exponential time weighting of the squared signal (IEC 61672-1: F = 0.125 s, S = 1 s), maximum over the recording.
import { ExponentialMeanSquare } from './dsp/exponential-average.js';
import type { StageDefinition } from './stage.js';

export interface TimeWeightingOptions { constants_s: number[] }

const col = (tau: number) => `max_twrms_${Math.round(tau * 1000)}ms`;

export const timeWeighting: StageDefinition<TimeWeightingOptions> = {
  group: 'time_weighting',
  columns: (o) => o.constants_s.map((tau) => ({ name: col(tau), unit: '[unit]', description: `Maximum exponentially time-weighted RMS, time constant ${tau} s, of the signal as declared (starting from zero).` })),
  create(ctx, o) {
    const averages = o.constants_s.map((tau) => new ExponentialMeanSquare(tau, ctx.sampleRate));
    return {
      push(x) { for (const a of averages) a.push(x); },
      finish: () => Object.fromEntries(o.constants_s.map((tau, c) => [col(tau), Math.sqrt(averages[c].max)])),
    };
  },
};
