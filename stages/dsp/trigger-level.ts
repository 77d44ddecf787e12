// An undeclared tacho trigger found from a stretch of the signal: the pulses' two levels, taken only where they stand clear of the noise.
import type { Trigger } from './pulse-edges.js';

/** Undeclared hysteresis, as a share of the span of the levels: an edge must cross 30 % and 70 % of it. */
export const TRIGGER_HYSTERESIS_SHARE = 0.4;
/**
 * Largest share of a stretch's samples between 30 % and 70 % of its span for its levels to count as a pulse train's. Pulses spend
 * only their edges there, a pickup's sine 26 % and a triangle 40 % (arcsine and uniform laws); Gaussian noise, whose smoothed span
 * over a second is about 4 standard deviations at 1,000 samples, 5.3 at 25,600 and 6.6 at 10⁶, spends 57 %, 71 % and 82 % (derived, measured with numpy).
 */
export const MIDDLE_SHARE_MAX = 0.5;
/** A drift that leaves less than half of the learnt margin between a level and the hysteresis band moves the trigger (our choice). */
const MARGIN_KEPT = 0.5;
/** A stretch's levels replace the trigger's only when their span is at least this share of its span: interference is smaller (our choice). */
const SPAN_KEPT = 0.5;

/** Low and high level of a stretch; equal when it is flat. */
export interface Levels { lo: number; hi: number }
/** Which extremes set the levels: those of the running median of three, or the second-smallest and second-largest samples. */
export type LevelsKind = 'smoothed' | 'second';

/** The middle of three values; NaN when the middle one is not a number. */
const medianOfThree = (a: number, b: number, c: number) => (Number.isNaN(b) ? NaN : Math.max(Math.min(a, b), Math.min(Math.max(a, b), c)));

// Extremes of the running median of three (Tukey's smoothing, common practice): a lone spike does not count; a pulse two or more samples wide does.
// The first and last samples have one neighbour only, so a lone spike there would stand: they are left out (kept in a stretch of one or two).
export function smoothedExtremes(x: Float64Array): Levels {
  let lo = Infinity, hi = -Infinity;
  const ends = x.length >= 3 ? 1 : 0;
  for (let i = ends; i < x.length - ends; i++) {
    const v = medianOfThree(x[i > 0 ? i - 1 : i], x[i], x[i + 1 < x.length ? i + 1 : i]);
    if (Number.isFinite(v)) { if (v < lo) lo = v; if (v > hi) hi = v; }
  }
  return lo <= hi ? { lo, hi } : { lo: NaN, hi: NaN };
}

/** The two smallest and two largest finite samples of what has been read (±Infinity before any). */
export interface SampleExtremes { lo1: number; lo2: number; hi1: number; hi2: number }

export const noExtremes = (): SampleExtremes => ({ lo1: Infinity, lo2: Infinity, hi1: -Infinity, hi2: -Infinity });

// The two smallest and two largest finite samples (order statistics), carried on from `from` (a new record; `from` is kept).
export function sampleExtremes(x: Float64Array, from: SampleExtremes = noExtremes()): SampleExtremes {
  let { lo1, lo2, hi1, hi2 } = from;
  for (let i = 0; i < x.length; i++) {
    const v = x[i];
    if (!Number.isFinite(v)) continue;
    if (v < lo1) { lo2 = lo1; lo1 = v; } else if (v < lo2) lo2 = v;
    if (v > hi1) { hi2 = hi1; hi1 = v; } else if (v > hi2) hi2 = v;
  }
  return { lo1, lo2, hi1, hi2 };
}

/** Second-smallest and second-largest of the extremes: a lone spike does not count; two pulses one sample wide do. */
const secondOf = ({ lo2, hi2 }: SampleExtremes): Levels => (lo2 <= hi2 ? { lo: lo2, hi: hi2 } : { lo: NaN, hi: NaN });

// Second-smallest and second-largest finite samples (order statistics): a lone spike does not count; two pulses one sample wide do.
export const secondExtremes = (x: Float64Array): Levels => secondOf(sampleExtremes(x));

export const levelsOf = (x: Float64Array, kind: LevelsKind): Levels => (kind === 'smoothed' ? smoothedExtremes(x) : secondExtremes(x));

/** Share of the finite samples strictly between 30 % and 70 % of the span of `levels`: the band the trigger's hysteresis spans. */
export function middleShare(x: Float64Array, { lo, hi }: Levels): number {
  const a = lo + 0.3 * (hi - lo), b = lo + 0.7 * (hi - lo);
  let inside = 0, finite = 0;
  for (let i = 0; i < x.length; i++) {
    const v = x[i];
    if (!Number.isFinite(v)) continue;
    finite++;
    if (v > a && v < b) inside++;
  }
  return finite ? inside / finite : 1;
}

/** `across`: the levels were set with the extremes of earlier stretches (pulses one sample wide, at most one a stretch). */
export interface FoundTrigger { trigger: Trigger; kind: LevelsKind; levels: Levels; across?: boolean }

/** Trigger midway between the levels, hysteresis a share of their span. */
export const triggerBetween = ({ lo, hi }: Levels): Trigger => ({ level: (lo + hi) / 2, hysteresis: TRIGGER_HYSTERESIS_SHARE * (hi - lo) });

// Levels that stand clear: a span of more than two converter steps (below that a converter flickers, IEEE Std 1241) with at most
// MIDDLE_SHARE_MAX of the samples between 30 % and 70 % of it. Smoothed extremes first (what a lone spike cannot set), then the
// second extremes, which keep pulses one sample wide that the median of three removes; then, where `earlier` holds the extremes
// of the stretches read before, the second extremes of those and this one together: pulses one sample wide at most one a stretch
// (a slow shaft) are confirmed by a pulse of an earlier stretch, as a lone spike is not. Flat only when every sample is equal.
export function triggerFrom(x: Float64Array, step: number | null = null, earlier: SampleExtremes | null = null): FoundTrigger | 'flat' | 'noise' {
  const clear = (levels: Levels) => levels.hi > levels.lo && (step == null || levels.hi - levels.lo > 2 * step) && middleShare(x, levels) <= MIDDLE_SHARE_MAX;
  for (const kind of ['smoothed', 'second'] as const) {
    const levels = levelsOf(x, kind);
    if (clear(levels)) return { trigger: triggerBetween(levels), kind, levels };
  }
  if (earlier) {
    const levels = secondOf(sampleExtremes(x, earlier));
    if (clear(levels)) return { trigger: triggerBetween(levels), kind: 'second', levels, across: true };
  }
  const own = sampleExtremes(x);
  return own.hi1 > own.lo1 ? 'noise' : 'flat';
}

// Whether a trigger still serves a stretch of these levels: each level at least MARGIN_KEPT of its learnt margin (0.3 of the span,
// 0.75 of the hysteresis) beyond the hysteresis band, so a level drifting towards the band moves the trigger before pulses are lost.
export function triggerFits({ level, hysteresis }: Trigger, { lo, hi }: Levels): boolean {
  const margin = MARGIN_KEPT * 0.75 * hysteresis;
  return lo <= level - hysteresis / 2 - margin && hi >= level + hysteresis / 2 + margin;
}

/** Whether a stretch's own trigger may replace the one in use: a span not far below the one the trigger was made for. */
export const spanComparable = (now: Trigger, found: FoundTrigger) => found.levels.hi - found.levels.lo >= (SPAN_KEPT * now.hysteresis) / TRIGGER_HYSTERESIS_SHARE;
