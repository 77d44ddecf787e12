// Time-weighted maxima LAFmax, LASmax and the C-weighted peak LCpeak: the signal through digital A and C weighting filters
// (dsp/weighting-filter.ts), then the exponential time weighting F or S, or the largest absolute value. Each filter's
// deviation from the analytic weighting at this sample rate is reported, and noted where it leaves the class 1 limits.
import { sosStepState, SosFilter } from './dsp/sosfilt.js';
import { ExponentialMeanSquare } from './dsp/exponential-average.js';
import type { Section } from './dsp/butterworth.js';
import { weightingFilter } from './dsp/weighting-filter.js';
import type { Weighting } from './dsp/frequency-weighting.js';
import { LEVEL_UNIT, levelDb, noLevels, P0_PA, pascalsPer } from './sound-pressure.js';
import type { ChannelContext, StageDefinition } from './stage.js';
import { checkWeighting } from './weighting-check.js';

/** Time constants F and S of IEC 61672-1, s. */
const FAST_S = 0.125, SLOW_S = 1;

const EMPTY = { lafmax: null, lasmax: null, lcpeak: null, a_filter_deviation_db: null, c_filter_deviation_db: null };

/** The filter for this channel, its deviation, and a note when it strays beyond class 1. */
function designFor(ctx: ChannelContext, kind: Weighting): { sos: Section[]; deviationDb: number } {
  const sos = weightingFilter(kind, ctx.sampleRate);
  const check = checkWeighting(sos, kind, ctx.sampleRate);
  if (check.outside.length) {
    const list = check.outside.map((b) => `${b.nominal} Hz ${b.deviationDb > 0 ? '+' : ''}${b.deviationDb.toFixed(2)} dB`).join(', ');
    ctx.note(`${ctx.name}: the digital ${kind} weighting at ${ctx.sampleRate} Hz strays beyond the IEC 61672-1 class 1 acceptance limits at ${list}; L${kind} figures from it are estimates`);
  }
  return { sos, deviationDb: check.maxAbsDb };
}

const allFinite = (x: Float64Array) => { for (let i = 0; i < x.length; i++) if (!Number.isFinite(x[i])) return false; return true; };

/** A filter that starts in the steady state of its first sample, as if the signal had held that value before. */
function filterFrom(sos: Section[], first: number): SosFilter {
  return new SosFilter(sos, sosStepState(sos).map((v) => v * first));
}

export const soundMaxima: StageDefinition<Record<string, never>> = {
  group: 'sound_level',
  columns: () => [
    { name: 'lafmax', unit: LEVEL_UNIT, description: 'Maximum A-weighted, Fast (0.125 s) time-weighted sound level (IEC 61672-1), from the digital A weighting filter.' },
    { name: 'lasmax', unit: LEVEL_UNIT, description: 'Maximum A-weighted, Slow (1 s) time-weighted sound level.' },
    { name: 'lcpeak', unit: LEVEL_UNIT, description: 'C-weighted peak sound level: the largest absolute sample of the digital C weighting filter\'s output.' },
    { name: 'a_filter_deviation_db', unit: 'dB', description: 'Largest |digital − analytic| of the A weighting filter at the one-third-octave mid-bands 10 Hz–10 kHz below Nyquist, at this sample rate.' },
    { name: 'c_filter_deviation_db', unit: 'dB', description: 'The same for the C weighting filter.' },
  ],
  create(ctx) {
    const pa = pascalsPer(ctx.unit);
    let a: ReturnType<typeof designFor>, c: ReturnType<typeof designFor>;
    try {
      if (pa === undefined) throw new Error(noLevels(ctx.name, ctx.unit));
      a = designFor(ctx, 'A');
      c = designFor(ctx, 'C');
    } catch (e) {
      const message = (e as Error).message;
      return { push() {}, finish() { if (ctx.quantity === 'sound_pressure') ctx.note(message.startsWith(ctx.name) ? message : `${ctx.name}: ${message}; LAFmax, LASmax and LCpeak left empty`); return { ...EMPTY }; } };
    }
    const fast = new ExponentialMeanSquare(FAST_S, ctx.sampleRate), slow = new ExponentialMeanSquare(SLOW_S, ctx.sampleRate);
    let aFilter: SosFilter | null = null, cFilter: SosFilter | null = null, peak = 0;
    let scratch = new Float64Array(0), input = new Float64Array(0), missing = 0;
    return {
      push(chunk) {
        if (chunk.length === 0) return;
        let x = chunk;
        // A missing sample would poison the filters' state for the rest of the recording: it enters them as 0.
        if (!allFinite(chunk)) {
          if (input.length < chunk.length) input = new Float64Array(chunk.length);
          x = input.subarray(0, chunk.length);
          for (let i = 0; i < x.length; i++) { const v = chunk[i]; if (Number.isFinite(v)) x[i] = v; else { x[i] = 0; missing++; } }
        }
        aFilter ??= filterFrom(a.sos, x[0]);
        cFilter ??= filterFrom(c.sos, x[0]);
        if (scratch.length < x.length) scratch = new Float64Array(x.length);
        const y = scratch.subarray(0, x.length);
        aFilter.process(x, y);
        for (let i = 0; i < y.length; i++) y[i] *= pa!;
        fast.push(y); slow.push(y);
        cFilter.process(x, y);
        for (let i = 0; i < y.length; i++) { const v = Math.abs(y[i]); if (v > peak) peak = v; }
      },
      finish() {
        if (!aFilter) return { ...EMPTY };
        if (missing) ctx.note(`${ctx.name}: ${missing} missing samples entered the weighting filters as 0 Pa`);
        return {
          lafmax: levelDb(fast.max), lasmax: levelDb(slow.max), lcpeak: peak > 0 ? 20 * Math.log10((peak * pa!) / P0_PA) : null,
          a_filter_deviation_db: a.deviationDb, c_filter_deviation_db: c.deviationDb,
        };
      },
    };
  },
};
