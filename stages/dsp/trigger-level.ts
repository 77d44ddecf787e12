// An undeclared tacho trigger found from a stretch of the signal: the pulses' two levels, or the level the signal rests at and the
// pulses' excursions from it, taken only where they stand clear of the noise.
import { robustSpread } from './robust-spread.js';
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

/**
 * How the pulses were told from the noise: `two-level`, their low and high level (an optical or TTL pickup, unipolar pulses up or
 * down from a rest level); `bipolar`, a rest level the pulses leave both ways (a variable-reluctance pickup).
 */
export type PulseShape = 'two-level' | 'bipolar';

/**
 * `across`: the levels were set with the extremes of earlier stretches (pulses one sample wide, at most one a stretch). `levels`:
 * the low and high level (two-level); the two lobes' peaks (bipolar), the rest level and the noise about it in `look`.
 */
export interface FoundTrigger { trigger: Trigger; kind: LevelsKind; levels: Levels; shape: PulseShape; across?: boolean; look?: RestLook }

/** Trigger midway between the levels, hysteresis a share of their span. */
export const triggerBetween = ({ lo, hi }: Levels): Trigger => ({ level: (lo + hi) / 2, hysteresis: TRIGGER_HYSTERESIS_SHARE * (hi - lo) });

// Levels that stand clear: a span of more than two converter steps (below that a converter flickers, IEEE Std 1241) with at most
// MIDDLE_SHARE_MAX of the samples between 30 % and 70 % of it. Smoothed extremes first (what a lone spike cannot set), then the
// second extremes, which keep pulses one sample wide that the median of three removes; then, where `earlier` holds the extremes
// of the stretches read before, the second extremes of those and this one together: pulses one sample wide at most one a stretch
// (a slow shaft) are confirmed by a pulse of an earlier stretch, as a lone spike is not. Flat only when every sample is equal.
// Where two levels stand clear of none, a level the signal rests at with bipolar pulses leaving it (restTrigger), by the same two extremes.
export function triggerFrom(x: Float64Array, step: number | null = null, earlier: SampleExtremes | null = null): FoundTrigger | 'flat' | 'noise' {
  const clear = (levels: Levels) => levels.hi > levels.lo && (step == null || levels.hi - levels.lo > 2 * step) && middleShare(x, levels) <= MIDDLE_SHARE_MAX;
  for (const kind of ['smoothed', 'second'] as const) {
    const levels = levelsOf(x, kind);
    if (clear(levels)) return { trigger: triggerBetween(levels), kind, levels, shape: 'two-level' };
  }
  for (const kind of ['smoothed', 'second'] as const) {
    const found = restTrigger(x, kind, step);
    if (found) return found;
  }
  if (earlier) {
    const levels = secondOf(sampleExtremes(x, earlier));
    if (clear(levels)) return { trigger: triggerBetween(levels), kind: 'second', levels, shape: 'two-level', across: true };
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

/** Whether a stretch's own trigger may replace the one in use: a span not far below the one the trigger was made for (bipolar: the smaller lobe, its hysteresis). */
export const spanComparable = (now: Trigger, found: FoundTrigger) => (found.shape === 'bipolar'
  ? found.trigger.hysteresis >= SPAN_KEPT * now.hysteresis
  : found.levels.hi - found.levels.lo >= (SPAN_KEPT * now.hysteresis) / TRIGGER_HYSTERESIS_SHARE);

/**
 * A pulse's excursion from the rest level must exceed this many of the noise's robust standard deviations to stand clear of it,
 * as an isolated sample must to count as a spike (the spikes flag's 10). Gaussian noise's largest excursion in 10⁶ samples is
 * about 5 (common practice), and the trigger's thresholds, at least half an excursion out, stay beyond its reach.
 */
export const REST_CLEAR_SIGMAS = 10;

/** How a stretch rests: its rest level, the noise about it (a robust standard deviation), and how far it reaches above and below the rest. */
export interface RestLook { rest: number; noise: number; up: number; down: number }

// Rest level the median of the finite samples, noise 1.4826 × their median absolute deviation (Hampel 1974, common practice):
// both stay with the rest while pulses fill under half the samples. No finer than an ideal converter's step / √12 (IEEE Std 1241).
// Reaches from the stretch's extremes of `kind`, so a lone spike sets none. Null without a finite sample.
export function restLook(x: Float64Array, kind: LevelsKind = 'smoothed', step: number | null = null): RestLook | null {
  const v = new Float64Array(x.length);
  let n = 0;
  for (let i = 0; i < x.length; i++) if (Number.isFinite(x[i])) v[n++] = x[i];
  if (!n) return null;
  const { centre: rest, sigma } = robustSpread(v.subarray(0, n));
  const noise = Math.max(sigma, step == null ? 0 : step / Math.sqrt(12));
  const { lo, hi } = levelsOf(x, kind);
  return { rest, noise, up: Math.max(0, hi - rest), down: Math.max(0, rest - lo) };
}

/** Whether an excursion from the rest stands clear of the noise, and of a converter's flicker (over two steps, IEEE Std 1241). */
export const excursionClear = (reach: number, noise: number, step: number | null = null) => reach > REST_CLEAR_SIGMAS * noise && reach > 2 * (step ?? 0);

/** Of a bipolar pulse's two lobes, the gap from one to the next is under this share of the gap between pulses: noise's excursions do not pair so (our choice). */
export const LOBES_PAIRED = 0.25;

/** Mean samples from the last sample beyond the rest ± half on one side to the first beyond it on the other, rising and falling; NaN where none. */
export interface LobeGaps { rising: number; falling: number }

// The changes of side of a signal beyond ±half about its rest, timed: within a bipolar pulse one lobe follows the other at once,
// while the change back spans the wait for the next pulse; noise's excursions change side after waits alike either way.
export function lobeGaps(x: Float64Array, rest: number, half: number): LobeGaps {
  let side = 0, last = 0, up = 0, ups = 0, down = 0, downs = 0;
  for (let i = 0; i < x.length; i++) {
    const v = x[i], s = v > rest + half ? 1 : v < rest - half ? -1 : 0;
    if (s === 0) continue;
    if (side < 0 && s > 0) { up += i - last; ups++; }
    if (side > 0 && s < 0) { down += i - last; downs++; }
    side = s;
    last = i;
  }
  return { rising: ups ? up / ups : NaN, falling: downs ? down / downs : NaN };
}

/**
 * The crossing inside the pulses, `falling` when their upper lobe comes first; null when the lobes do not pair (LOBES_PAIRED).
 * One change of side only (one pulse in a stretch of `length` samples): its gap is held against the rest of the stretch.
 */
export function pairedLobes({ rising, falling }: LobeGaps, length: number): { falling: boolean } | null {
  if (Number.isNaN(rising) && Number.isNaN(falling)) return null;
  if (Number.isNaN(rising) || Number.isNaN(falling)) {
    const gap = Number.isNaN(rising) ? falling : rising;
    return gap <= LOBES_PAIRED * (length - gap) ? { falling: Number.isNaN(rising) } : null;
  }
  if (rising <= LOBES_PAIRED * falling) return { falling: false };
  if (falling <= LOBES_PAIRED * rising) return { falling: true };
  return null;
}

// A signal resting at a level with bipolar pulses (a variable-reluctance pickup): both lobes clear of the noise (restLook,
// excursionClear) and following each other closely (pairedLobes). Edges are timed where a pulse crosses the rest level between
// its lobes, armed and fired at half the smaller lobe: the crossing a comparator with hysteresis times on such a pickup (common
// practice), at a phase that does not move as the lobes grow with speed. Pulses leaving the rest one way only are two levels.
export function restTrigger(x: Float64Array, kind: LevelsKind, step: number | null = null): FoundTrigger | null {
  const look = restLook(x, kind, step);
  if (!look) return null;
  const { rest, noise, up, down } = look;
  if (!excursionClear(up, noise, step) || !excursionClear(down, noise, step)) return null;
  const hysteresis = Math.min(up, down);
  const paired = pairedLobes(lobeGaps(x, rest, hysteresis / 2), x.length);
  if (!paired) return null;
  return { trigger: { level: rest, hysteresis, ...(paired.falling ? { falling: true } : {}) }, kind, levels: { lo: rest - down, hi: rest + up }, shape: 'bipolar', look };
}
