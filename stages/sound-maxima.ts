// Time-weighted maxima LAFmax, LASmax and the C-weighted peak LCpeak from the channel's weighted sound pressure
// (weighted-sound.ts): the exponential time weighting F or S of the A-weighted pressure, or the largest absolute C-weighted
// value between the samples (IEC 61672-1 defines the peak from the instantaneous pressure). Each filter's deviation from the analytic weighting at this sample rate is reported, and noted where it leaves the class 1 limits.
import { settlingS, unsettled } from './dsp/exponential-average.js';
import { LEVEL_UNIT, levelDb, P0_PA } from './sound-pressure.js';
import type { StageDefinition } from './stage.js';
import { FAST_S, SLOW_S, START_S, weightedSoundOf } from './weighted-sound.js';

const EMPTY = { lafmax: null, lasmax: null, lcpeak: null, a_filter_deviation_db: null, c_filter_deviation_db: null };

export const soundMaxima: StageDefinition<Record<string, never>> = {
  group: 'sound_level',
  section: 'sound_level',
  spectral: false,
  columns: () => [
    { name: 'lafmax', unit: LEVEL_UNIT, description: 'Maximum A-weighted, Fast (0.125 s) time-weighted sound level (IEC 61672-1), from the digital A weighting filter.' },
    { name: 'lasmax', unit: LEVEL_UNIT, description: 'Maximum A-weighted, Slow (1 s) time-weighted sound level.' },
    { name: 'lcpeak', unit: LEVEL_UNIT, description: 'C-weighted peak sound level: the largest absolute value of the digital C weighting filter\'s output between the samples (true peak by 4× oversampling, ITU-R BS.1770-4 Annex 2), the filter started on the backward prediction of the recording\'s first 0.1 s.' },
    { name: 'a_filter_deviation_db', unit: 'dB', description: 'Largest |digital − analytic| of the A weighting filter at the one-third-octave mid-bands 10 Hz–10 kHz below Nyquist, at this sample rate.' },
    { name: 'c_filter_deviation_db', unit: 'dB', description: 'The same for the C weighting filter.' },
  ],
  create(ctx) {
    const weighted = weightedSoundOf(ctx);
    const { design } = weighted;
    if ('error' in design) {
      const message = design.error;
      return { push() {}, finish() { if (ctx.quantity === 'sound_pressure') ctx.note(message.startsWith(ctx.name) ? message : `${ctx.name}: ${message}; LAFmax, LASmax and LCpeak left empty`); return { ...EMPTY }; } };
    }
    return {
      push() {},
      finish() {
        const w = weighted.figures();
        if (!w) return { ...EMPTY };
        if (w.missing) ctx.note(`${ctx.name}: ${w.missing} missing samples: the weighting filters held the last value through each gap, and the levels leave out the gaps and the filters' settling after each (${START_S} s)`);
        const short = unsettledMaxima(w.kept / ctx.sampleRate);
        if (short) ctx.note(`${ctx.name}: ${short}`);
        return {
          lafmax: levelDb(w.fastMax), lasmax: levelDb(w.slowMax), lcpeak: w.peakC > 0 ? 20 * Math.log10(w.peakC / P0_PA) : null,
          a_filter_deviation_db: design.a.deviationDb, c_filter_deviation_db: design.c.deviationDb,
        };
      },
    };
  },
};

const digits = (v: number) => Number(v.toPrecision(3));

/**
 * Why LAFmax or LASmax of a recording this long reads low: the time weighting starts from zero, so a steady sound's level
 * reaches 10·lg(1 − e^(−T/τ)) dB of itself by the end; said where that is more than `toleranceDb`. Empty otherwise.
 */
export function unsettledMaxima(durationS: number, toleranceDb = 0.1): string {
  const short = unsettled(durationS, [FAST_S, SLOW_S], toleranceDb);
  if (!short.length) return '';
  const each = short.map(({ tau, shortfallDb }) => `${tau === FAST_S ? 'LAFmax' : 'LASmax'} ${digits(-shortfallDb)} dB low (${tau === FAST_S ? 'Fast' : 'Slow'}, τ = ${tau} s, settles within ${toleranceDb} dB after ${digits(settlingS(tau, toleranceDb))} s)`);
  return `${digits(durationS)} s of sound is too short for the time weighting to settle (it starts from zero): a sound steady over the recording reads ${each.join(', ')}, 10·lg(1 − e^(−T/τ))`;
}
