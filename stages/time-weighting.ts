// Exponential time weighting of the squared signal (IEC 61672-1: F = 0.125 s, S = 1 s), maximum over the recording.
import { expAverageOf } from './fused/exp-average.js';
import type { StageDefinition } from './stage.js';

export interface TimeWeightingOptions { constants_s: number[] }

const col = (tau: number) => `max_twrms_${Math.round(tau * 1000)}ms`;

export const timeWeighting: StageDefinition<TimeWeightingOptions> = {
  group: 'time_weighting',
  columns: (o) => o.constants_s.map((tau) => ({ name: col(tau), unit: '[unit]', description: `Maximum exponentially time-weighted RMS, time constant ${tau} s, of the signal as declared (starting from zero).` })),
  create(ctx, o) {
    // y[n] = y[n−1] + α·(x[n]² − y[n−1]), α = 1 − e^(−1/(τ·fs)): the exact sampled response of the first-order averager, in the fused pass.
    const averages = o.constants_s.map((tau) => expAverageOf(ctx, 1 - Math.exp(-1 / (tau * ctx.sampleRate))));
    return {
      push() {},
      finish: () => Object.fromEntries(o.constants_s.map((tau, c) => [col(tau), Math.sqrt(averages[c].max)])),
    };
  },
};
