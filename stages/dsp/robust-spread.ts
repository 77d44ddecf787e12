// A robust level and spread: the median, and 1.4826 × the median absolute deviation from it, which is the standard
// deviation for Gaussian data (Hampel 1974; the constant as in Rousseeuw & Croux 1993).
import { median, medianBins } from './median.js';

/** The factor from the median absolute deviation to the standard deviation of Gaussian data. */
export const MAD_TO_SIGMA = 1.4826;

export interface RobustSpread { centre: number; sigma: number }

/** Median and 1.4826 × MAD of v (reordered and overwritten: v is scratch); `bins` is the median's scratch. */
export function robustSpread(v: Float64Array, bins: Int32Array = medianBins()): RobustSpread {
  const centre = median(v, bins);
  for (let i = 0; i < v.length; i++) v[i] = Math.abs(v[i] - centre);
  return { centre, sigma: MAD_TO_SIGMA * median(v, bins) };
}
