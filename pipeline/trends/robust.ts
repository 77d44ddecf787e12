// The baseline's centre and spread: median and median absolute deviation (Hampel 1974), by quickselect.
import { median } from '../../stages/quality/spikes.js';

/** 1.4826 × MAD estimates the standard deviation of Gaussian data: 1 / Φ⁻¹(3/4) (Rousseeuw and Croux 1993). */
export const MAD_TO_SIGMA = 1.4826;

/** Median and MAD of the values (not reordered); NaN for none. */
export function medianAndMad(values: ArrayLike<number>): { median: number; mad: number } {
  if (values.length === 0) return { median: NaN, mad: NaN };
  const v = Float64Array.from(values);
  const m = median(v);
  for (let i = 0; i < v.length; i++) v[i] = Math.abs(v[i] - m);
  return { median: m, mad: median(v) };
}
