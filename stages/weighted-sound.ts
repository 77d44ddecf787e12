// The channel's sound pressure through the digital A and C weighting filters (dsp/weighting-filter.ts), filtered once and
// shared by the equivalent levels and the maxima: mean squares, Fast and Slow maxima of the A-weighted signal, C peak
// (its true peak between the samples, as IEC 61672-1 defines the peak from the instantaneous pressure, not the samples).
// The filters start on a plausible past (dsp/backward-extension.ts) rather than at rest or on the first sample held
// constant, either of which makes a start-up transient that a signal already running when the recording starts never had.
import { backwardExtension } from './dsp/backward-extension.js';
import type { Section } from './dsp/butterworth.js';
import { ExponentialMeanSquare } from './dsp/exponential-average.js';
import { simdPeakScan } from './dsp/fft-simd.js';
import type { Weighting } from './dsp/frequency-weighting.js';
import { sosStepState, SosFilter } from './dsp/sosfilt.js';
import { guardFor, TAP_PAIRS, TruePeak } from './dsp/true-peak.js';
import { weightingFilter } from './dsp/weighting-filter.js';
import { noLevels, pascalsPer } from './sound-pressure.js';
import type { ChannelContext, Stage } from './stage.js';
import { checkWeighting } from './weighting-check.js';

/** Time constants F and S of IEC 61672-1, s. */
export const FAST_S = 0.125, SLOW_S = 1;

/**
 * The recording's first stretch the past is predicted from, and the length of that past, s: the slowest mode of either
 * filter is the double pole at f1 = 20.6 Hz (τ = 7.7 ms), whose response to the past's first sample is (1 + 13)·e^−13 ≈ 3e−5 of it after 0.1 s.
 */
export const START_S = 0.1;

export interface WeightingDesign { sos: Section[]; deviationDb: number }

export interface WeightedFigures {
  /** Mean squares of the A- and C-weighted sound pressure over the recording, Pa². */
  meanSquareA: number; meanSquareC: number;
  /** Largest Fast and Slow time-weighted mean squares of the A-weighted pressure, Pa²; largest |C-weighted pressure| between the samples (4× true peak), Pa. */
  fastMax: number; slowMax: number; peakC: number;
  /** Largest |C-weighted pressure| of the samples alone, Pa: up to 1 − cos(π·f/fs) below peakC for a crest at f. */
  samplePeakC: number;
  /** Samples that were not finite and entered the filters as 0 Pa. */
  missing: number;
  /** Samples the figures count (the time weighting's average runs over these alone). */
  kept: number;
}

export interface WeightedSound extends Stage {
  /** The A and C filters, or why there are none (a unit that is no pressure, a sample rate too low). */
  readonly design: { a: WeightingDesign; c: WeightingDesign } | { error: string };
  /** The figures once every chunk has been pushed; null for a recording without samples or without filters. */
  figures(): WeightedFigures | null;
}

/** The filter for this channel, its deviation, and a note when it strays beyond class 1. */
function designFor(ctx: ChannelContext, kind: Weighting): WeightingDesign {
  const sos = weightingFilter(kind, ctx.sampleRate);
  const check = checkWeighting(sos, kind, ctx.sampleRate);
  if (check.outside.length) {
    const list = check.outside.map((b) => `${b.nominal} Hz ${b.deviationDb > 0 ? '+' : ''}${b.deviationDb.toFixed(2)} dB`).join(', ');
    ctx.note(`${ctx.name}: the digital ${kind} weighting at ${ctx.sampleRate} Hz strays beyond the IEC 61672-1 class 1 acceptance limits at ${list}; L${kind} figures from it are estimates`);
  }
  return { sos, deviationDb: check.maxAbsDb };
}

function designsOf(ctx: ChannelContext): WeightedSound['design'] {
  if (pascalsPer(ctx.unit) === undefined) return { error: noLevels(ctx.name, ctx.unit) };
  try {
    return { a: designFor(ctx, 'A'), c: designFor(ctx, 'C') };
  } catch (e) {
    return { error: (e as Error).message };
  }
}

/** A filter run over `past` from the steady state of its first sample (as scipy's filtfilt starts on its padding), outputs dropped. */
export function filterAfter(sos: Section[], past: Float64Array): SosFilter {
  const filter = new SosFilter(sos, sosStepState(sos).map((v) => v * (past.length ? past[0] : 0)));
  if (past.length) filter.process(past, new Float64Array(past.length));
  return filter;
}

/**
 * Missing samples held at the last finite value into `out` (the first finite one for a leading gap, 0 for a chunk with none),
 * and marked in `gone`, the samples `settle` after each gap's end as well: the filters' response to the step a gap's end
 * brings is no sound. Returns how many were missing and how many samples of settling are still to mark.
 */
export function heldInto(x: Float64Array, out: Float64Array, gone: Uint8Array, last: number, settleLeft: number, settle: number): { missing: number; last: number; settleLeft: number } {
  let missing = 0;
  if (Number.isNaN(last)) { for (let i = 0; i < x.length; i++) if (Number.isFinite(x[i])) { last = x[i]; break; } if (Number.isNaN(last)) last = 0; }
  for (let i = 0; i < x.length; i++) {
    const v = x[i];
    if (Number.isFinite(v)) {
      out[i] = last = v;
      gone[i] = settleLeft > 0 ? 1 : 0;
      if (settleLeft > 0) settleLeft--;
    } else { out[i] = last; gone[i] = 1; missing++; settleLeft = settle; }
  }
  return { missing, last, settleLeft };
}

const sumOfSquares = (y: Float64Array) => { let s = 0; for (let i = 0; i < y.length; i++) s += y[i] * y[i]; return s; };
// The same over the samples `gone` does not mark.
const keptSumOfSquares = (y: Float64Array, gone: Uint8Array) => { let s = 0; for (let i = 0; i < y.length; i++) if (!gone[i]) s += y[i] * y[i]; return s; };
// Samples `gone` marks made NaN: the true peak takes no candidate there, nor an interpolated point whose taps reach one.
const blanked = (y: Float64Array, gone: Uint8Array) => { for (let i = 0; i < y.length; i++) if (gone[i]) y[i] = NaN; };
const keptCount = (gone: Uint8Array) => { let k = 0; for (let i = 0; i < gone.length; i++) k += gone[i] ? 0 : 1; return k; };
const scaled = (y: Float64Array, k: number) => { for (let i = 0; i < y.length; i++) y[i] *= k; };

/** The channel's weighted sound pressure, made on first request and fed each chunk once. */
export function weightedSoundOf(ctx: ChannelContext): WeightedSound {
  return ctx.shared('weighted-sound', () => {
    const design = designsOf(ctx);
    const pa = pascalsPer(ctx.unit) ?? 1;
    const startLength = Math.max(1, Math.ceil(START_S * ctx.sampleRate));
    const start = new Float64Array(startLength);
    const fast = new ExponentialMeanSquare(FAST_S, ctx.sampleRate), slow = new ExponentialMeanSquare(SLOW_S, ctx.sampleRate);
    let aFilter: SosFilter | null = null, cFilter: SosFilter | null = null;
    let filled = 0, count = 0, missing = 0, sumA = 0, sumC = 0;
    // The C-weighted signal holds what the channel holds, up to its declared highest frequency (or fs/2.56).
    const peakC = new TruePeak(guardFor(ctx.sampleRate, ctx.maxFrequencyHz), simdPeakScan(TAP_PAIRS));
    let x = new Float64Array(0), y = new Float64Array(0), marks = new Uint8Array(0), startMarks = new Uint8Array(startLength);
    // Gaps: the value held into the filters, and the samples after the last gap whose output is still the filters' settling.
    let last = NaN, settleLeft = 0, anyGone = false;
    const settle = startLength;

    // `gone` marks samples whose output counts in no figure: missing ones, and the filters' settling after a gap.
    const feed = (chunk: Float64Array, gone: Uint8Array | null) => {
      if (chunk.length === 0) return;
      if (y.length < chunk.length) y = new Float64Array(chunk.length);
      const out = y.subarray(0, chunk.length);
      aFilter!.process(chunk, out);
      scaled(out, pa);
      if (gone) { fast.pushKept(out, gone); slow.pushKept(out, gone); } else { fast.push(out); slow.push(out); }
      sumA += gone ? keptSumOfSquares(out, gone) : sumOfSquares(out);
      cFilter!.process(chunk, out);
      scaled(out, pa);
      sumC += gone ? keptSumOfSquares(out, gone) : sumOfSquares(out);
      if (gone) blanked(out, gone);
      peakC.push(out);
      count += gone ? keptCount(gone) : chunk.length;
    };
    // Once the first stretch is in (or the recording ends before it is), the filters run over its predicted past, then over it.
    const begin = () => {
      if (aFilter || 'error' in design || filled === 0) return;
      const past = backwardExtension(start.subarray(0, filled), startLength);
      aFilter = filterAfter(design.a.sos, past);
      cFilter = filterAfter(design.c.sos, past);
      feed(start.subarray(0, filled), anyGone ? startMarks.subarray(0, filled) : null);
    };

    return {
      design,
      push(chunk) {
        if ('error' in design || chunk.length === 0) return;
        if (x.length < chunk.length) { x = new Float64Array(chunk.length); marks = new Uint8Array(chunk.length); }
        const v = x.subarray(0, chunk.length), gone = marks.subarray(0, chunk.length);
        // A missing sample would poison the filters' state for the rest of the recording: the last finite value is held
        // through a gap, and what the filters give there and while they settle after it counts in no figure.
        const held = heldInto(chunk, v, gone, last, settleLeft, settle);
        const marked = held.missing > 0 || settleLeft > 0;
        missing += held.missing; last = held.last; settleLeft = held.settleLeft;
        let from = 0;
        if (!aFilter) {
          from = Math.min(v.length, startLength - filled);
          start.set(v.subarray(0, from), filled);
          startMarks.set(gone.subarray(0, from), filled);
          anyGone ||= marked;
          filled += from;
          if (filled === startLength) begin();
        }
        if (aFilter && from < v.length) feed(v.subarray(from), marked ? gone.subarray(from) : null);
      },
      finish: () => ({}),
      figures() {
        begin();
        if (!aFilter || count === 0) return null;
        const { samplePeak, truePeak } = peakC.result();
        return { meanSquareA: sumA / count, meanSquareC: sumC / count, fastMax: fast.max, slowMax: slow.max, peakC: truePeak, samplePeakC: samplePeak, missing, kept: count };
      },
    };
  });
}
