// How far a value sits from its baseline: a level change in decibels and a robust z-score.
import type { LevelKind } from './options.js';
import { MAD_TO_SIGMA } from './robust.js';

/** Level change against the baseline median: 20·log10 of the amplitude ratio (or the difference of two dB values); null when not a level or not positive. */
export function changeDb(value: number, median: number, level: LevelKind): number | null {
  if (level === 'decibel') return value - median;
  if (level === 'amplitude' && value > 0 && median > 0) return 20 * Math.log10(value / median);
  return null;
}

/** The spread a score divides by: 1.4826 × MAD, but never less than `floor` × |median|. */
export const spreadOf = (median: number, mad: number, floor: number) => Math.max(MAD_TO_SIGMA * mad, floor * Math.abs(median));

/** Robust z-score (value − median) / spread (Rousseeuw and Croux 1993 for the spread); null when the spread is zero and the value differs. */
export function robustScore(value: number, median: number, mad: number, floor: number): number | null {
  const spread = spreadOf(median, mad, floor);
  if (spread > 0) return (value - median) / spread;
  return value === median ? 0 : null;
}
