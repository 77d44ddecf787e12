// How far a spectral line stands above the spectrum around it, in dB.

import { median } from './median.js';

/** Bins either side of the line whose median is its floor, and bins either side left out as the line's own (a Hann main lobe spans ±2). */
export const FLOOR_BINS = 50;
export const LOBE_BINS = 2;

// A line's prominence over a local median floor: 10·log10(P[k] / median of P over bins k ± `floor`, bin 0 and k ± `lobe`
// left out; the median of the neighbourhood as the noise level, as a cell-averaging detector's ordered-statistic variant
// takes it (Rohling, IEEE Trans. AES 19(4), 1983, from memory). Null without such bins or with no power around the line.
export function lineProminenceDb(density: Float64Array, k: number, floor = FLOOR_BINS, lobe = LOBE_BINS): number | null {
  const lo = Math.max(1, k - floor), hi = Math.min(density.length - 1, k + floor);
  const around = new Float64Array(Math.max(0, hi - lo + 1));
  let m = 0;
  for (let i = lo; i <= hi; i++) if (Math.abs(i - k) > lobe) around[m++] = density[i];
  if (m === 0) return null;
  const level = median(around.subarray(0, m));
  return level > 0 && density[k] > 0 ? 10 * Math.log10(density[k] / level) : null;
}
