// Exponential time weighting of the squared signal (IEC 61672-1: F = 0.125 s, S = 1 s), maximum over the recording.
import { settlingS, unsettled } from './dsp/exponential-average.js';
import { expAverageOf } from './fused/exp-average.js';
import { missingOf } from './fused/missing.js';
import { hzName } from './names.js';
import type { StageDefinition } from './stage.js';

export interface TimeWeightingOptions { constants_s: number[] }

// The time constant in milliseconds as the spec gives it, a decimal point written p (62.5 ms: max_twrms_62p5ms), as band names are.
const col = (tau: number) => `max_twrms_${hzName(Number((tau * 1000).toPrecision(12)))}ms`;

export const timeWeighting: StageDefinition<TimeWeightingOptions> = {
  group: 'time_weighting',
  section: 'time_weighting_s',
  spectral: false,
  columns: (o) => o.constants_s.map((tau) => ({ name: col(tau), unit: '[unit]', description: `Maximum exponentially time-weighted RMS, time constant ${tau} s, of the signal as declared (starting from zero); null when the channel has no finite samples.` })),
  create(ctx, o) {
    // y[n] = y[n−1] + α·(x[n]² − y[n−1]), α = 1 − e^(−1/(τ·fs)): the exact sampled response of the first-order averager, in the fused pass.
    const averages = o.constants_s.map((tau) => expAverageOf(ctx, 1 - Math.exp(-1 / (tau * ctx.sampleRate))));
    const missing = missingOf(ctx);
    let n = 0;
    return {
      push(x) { n += x.length; },
      finish() {
        // The averages run over the finite samples only, so those set how far each has settled.
        // A channel with no finite sample has no average at all: null, not the 0 it started from.
        if (n > 0 && missing.count === n) return Object.fromEntries(o.constants_s.map((tau) => [col(tau), null]));
        const note = unsettledNote(ctx.name, (n - missing.count) / ctx.sampleRate, o.constants_s);
        if (note) ctx.note(note);
        return Object.fromEntries(o.constants_s.map((tau, c) => [col(tau), Math.sqrt(averages[c].max)]));
      },
    };
  },
};

const digits = (v: number) => Number(v.toPrecision(3));

/**
 * A note for a recording too short for an average to settle: a steady signal's maximum then reads more than 0.1 dB low,
 * 10·lg(1 − e^(−T/τ)) dB (the average starts from zero); empty when every time constant has settled.
 */
export function unsettledNote(name: string, durationS: number, constantsS: number[], toleranceDb = 0.1): string {
  const short = unsettled(durationS, constantsS, toleranceDb);
  if (!short.length) return '';
  const each = short.map(({ tau, shortfallDb: db }) => `${col(tau)} ${digits(-db)} dB (${digits(100 * (1 - 10 ** (db / 20)))} %) low`);
  return `${name}: ${digits(durationS)} s of samples is too short for the time weighting to settle (the exponential average starts from zero, and comes within ${toleranceDb} dB of a steady signal after ${digits(settlingS(1, toleranceDb))} × its time constant): a signal steady over the recording reads ${each.join(', ')}, 10·lg(1 − e^(−T/τ))`;
}
