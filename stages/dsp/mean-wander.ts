// How much a sequence of window means wanders on its own from one window to the next, robust to a step or a smooth drift.

import { median } from './median.js';

/** Median of a χ² variable of one degree of freedom: turns a median of squares into a variance (any statistics table). */
const MEDIAN_CHI2_1 = 0.454936;

// Robust scale of second differences (m[k] − 2m[k−1] + m[k−2], of variance 6σ² for independent means of variance σ²; a
// variogram of order 2), by the median of their squares over the median of χ²₁: a level, a line and a smooth curve leave
// almost nothing in them, a step only two of them, which the median passes over. Zero for fewer than three means.
export function meanWander(means: ArrayLike<number>, count = means.length): number {
  if (count < 3) return 0;
  const squares = new Float64Array(count - 2);
  for (let k = 2; k < count; k++) { const d = means[k] - 2 * means[k - 1] + means[k - 2]; squares[k - 2] = (d * d) / 6; }
  return Math.sqrt(median(squares) / MEDIAN_CHI2_1);
}
