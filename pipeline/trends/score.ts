// How far a value sits from its baseline: a level change in decibels and a robust z-score.
import type { LevelKind } from './options.js';
import { MAD_TO_SIGMA } from './robust.js';

/** Level change against the baseline median: 20·log10 of an amplitude ratio, 10·log10 of a power ratio, or the difference of two dB values; null when not a level or not positive. */
export function changeDb(value: number, median: number, level: LevelKind): number | null {
  if (level === 'decibel') return value - median;
  if ((level === 'amplitude' || level === 'power') && value > 0 && median > 0) return decibelsOf(value / median, level);
  return null;
}

/** A ratio of two figures of one kind in decibels: 20·log10 for amplitudes, 10·log10 for powers (mean squares). */
export const decibelsOf = (ratio: number, level: 'amplitude' | 'power'): number => (level === 'power' ? 10 : 20) * Math.log10(ratio);

/** Relative size of rounding in a stored figure: values closer to the median than this are equal (float64 carries about 1e-16; sums and transforms lose some digits). */
export const ROUNDING = 1e-9;
/** The spread where the median is 0 and half the baseline or more is exactly 0 (a count): any value that is not 0 scores far beyond any threshold. */
export const ZERO_MEDIAN_SPREAD = 1e-12;

/**
 * The spread a score divides by: 1.4826 × MAD (Rousseeuw and Croux 1993), but never less than `floor` × |median|, nor than
 * rounding (1e-9 × |median|, or 1e-12 in the feature's unit where the median is 0), so it is never zero.
 */
export const spreadOf = (median: number, mad: number, floor: number) => Math.max(MAD_TO_SIGMA * mad, floor * Math.abs(median), ROUNDING * Math.abs(median)) || ZERO_MEDIAN_SPREAD;

/** Robust z-score (value − median) / spread (Rousseeuw and Croux 1993 for the spread): equal values score 0, a real difference is scored whatever the spread. */
export function robustScore(value: number, median: number, mad: number, floor: number): number {
  return (value - median) / spreadOf(median, mad, floor);
}
