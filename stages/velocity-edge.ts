// A spectral line whose window main lobe straddles a velocity band's lower edge: how far it moves the band's figure.
import { median } from './dsp/median.js';
import { bandMeanSquare, resolutionOf, type Psd } from './dsp/welch.js';

/** The error (a fraction of the velocity RMS) beyond which a figure is at risk: the 5 % a warning stands for. */
export const EDGE_ERROR = 0.05;

/** A line stands at least this much (a power ratio, 10 dB) above the median of its neighbourhood's bins (our choice). */
export const LINE_OVER_CONTINUUM = 10;

/** A line near the edge: its frequency, its part of the band's true velocity, and the figure's estimated error. */
export interface EdgeLine { frequency: number; share: number; error: number; resolution: number }

// A Hann window's main lobe spans ±2 resolution bins, its sidelobes 31 dB down (Harris, Proc. IEEE 66(1), 1978).
const LOBE = 2;

// Power-weighted mean frequency over the lobe around `centre`: the Hann lobe's power is symmetric about the line's
// frequency (Harris 1978), so the centroid of the continuum-subtracted bins finds it between bins.
function lobeCentroid(p: Psd, centre: number, r: number, continuum: number): number {
  const { density, df } = p;
  let sum = 0, moment = 0;
  for (let k = Math.max(1, Math.ceil((centre - LOBE * r) / df)); k <= Math.min(density.length - 1, Math.floor((centre + LOBE * r) / df)); k++) {
    const excess = Math.max(0, density[k] - continuum);
    sum += excess;
    moment += excess * k * df;
  }
  return sum > 0 ? moment / sum : centre;
}

/**
 * The line nearest a band's lower edge `lo`, when its lobe straddles it and moves the figure by more than `limit`; else null.
 * A line is a bin within 1.5 resolution bins of the edge standing LINE_OVER_CONTINUUM over the median of the bins 2–8
 * resolution bins either side (the continuum); the lobe's excess over the continuum, summed as the figure sums it (bins
 * across the edge by their fraction, each weighted at its own frequency), is held against the line's whole power weighted
 * at the line's frequency, counted only where the line lies in the band: their difference is the part the window moved
 * across the edge. Broadband vibration has no line: what leaks out there is about what leaks in.
 */
export function edgeLine(p: Psd, lo: number, hi: number, total: number, weight: (f: number) => number, limit = EDGE_ERROR): EdgeLine | null {
  const r = resolutionOf(p), { density, df } = p;
  if (!(total > 0)) return null;
  // The largest bin within 1.5 resolution bins of the edge, climbed to its lobe's top (a line just beyond still straddles).
  let k = -1;
  for (let j = Math.max(1, Math.ceil((lo - 1.5 * r) / df)); j <= Math.min(density.length - 2, Math.floor((lo + 1.5 * r) / df)); j++) if (k < 0 || density[j] > density[k]) k = j;
  if (k < 0) return null;
  while (k > 1 && density[k - 1] > density[k]) k--;
  while (k < density.length - 2 && density[k + 1] > density[k]) k++;
  const peak = k * df;
  if (Math.abs(peak - lo) > LOBE * r) return null;
  const around: number[] = [];
  for (let j = Math.max(1, Math.ceil((peak - 8 * r) / df)); j <= Math.min(density.length - 1, Math.floor((peak + 8 * r) / df)); j++) if (Math.abs(j * df - peak) > LOBE * r) around.push(density[j]);
  if (around.length === 0) return null;
  const continuum = median(Float64Array.from(around));
  if (!(density[k] >= LINE_OVER_CONTINUUM * continuum)) return null;
  const f = lobeCentroid(p, peak, r, continuum);
  // The lobe alone, over the continuum, as the band's own sum reads it; and the line's whole power.
  const lobe = new Float64Array(density.length);
  for (let j = Math.max(1, Math.ceil((f - LOBE * r) / df)); j <= Math.min(density.length - 1, Math.floor((f + LOBE * r) / df)); j++) lobe[j] = Math.max(0, density[j] - continuum);
  const lobePsd = { ...p, density: lobe };
  const read = bandMeanSquare(lobePsd, lo, hi, weight);
  const truth = f >= lo && f < hi ? bandMeanSquare(lobePsd, 0, Infinity) * weight(f) : 0;
  const corrected = total - read + truth;
  if (!(corrected > 0)) return null;
  const error = Math.sqrt(total / corrected) - 1;
  return Math.abs(error) > limit ? { frequency: f, share: truth / corrected, error, resolution: r } : null;
}
