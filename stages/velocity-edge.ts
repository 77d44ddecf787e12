// A steady spectral line near a velocity band's lower edge, whose window lobe the edge cuts: how far it moves the band's figure.
import { median } from './dsp/median.js';
import { fitTone, toneDensity } from './dsp/lobe-fit.js';
import { bandMeanSquare, resolutionOf, type Psd } from './dsp/welch.js';
import type { WindowName } from './dsp/window.js';

/** The error (a fraction of the velocity RMS) beyond which a figure is at risk: the 5 % a warning stands for. */
export const EDGE_ERROR = 0.05;

/** A line stands at least this much (a power ratio, 10 dB) above the median of its neighbourhood's bins (our choice). */
export const LINE_OVER_CONTINUUM = 10;

/**
 * Lines are looked for from this many resolution bins below the edge (our choice): a Hann window's side lobes carry a line
 * 2–3 bins below the edge across it, which in a band holding little else moves the figure by tens of per cent.
 */
export const BINS_BELOW = 5;

/** Lines are looked for up to this many resolution bins above the edge: beyond, the main lobe (±2 bins for Hann) keeps clear of it. */
export const BINS_ABOVE = 1.5;

/**
 * A line within this many resolution bins of the edge is taken to lie on it, in the band (which holds its lower edge): the
 * lobe fit finds a steady tone's frequency within 10⁻³ resolution bins (10⁻⁴ in Welch averages of 1–10 s;
 * test/velocity-edge.test.ts), so a tone on the edge reads as in the band, and none a hundredth of a bin off it on the wrong side.
 */
export const ON_EDGE = 1e-3;

/** The most an estimate says a figure reads: 100 times what its band holds, where the line's leak is nearly all of it. */
export const MOST_TIMES = 100;

/** A line near the edge: its frequency, its part of the band's true velocity, and the figure's estimated error. */
export interface EdgeLine { frequency: number; share: number; error: number; resolution: number }

// A Hann window's main lobe spans ±2 resolution bins (Harris, Proc. IEEE 66(1), 1978): the continuum is read beyond it.
const LOBE = 2;

// How far from the line its modelled lobe and side lobes are summed: beyond 40 bins a Hann side lobe lies over 110 dB down.
const REACH = 40;

/**
 * The line nearest a band's lower edge `lo`, when its window's lobe, cut by the edge, moves the figure by more than
 * `limit`; else null. A line is the largest bin from BINS_BELOW resolution bins below the edge to BINS_ABOVE above it,
 * climbed to its lobe's top, standing LINE_OVER_CONTINUUM over the median of the bins 2–8 resolution bins either side (the
 * continuum). Its frequency and power are fitted to its lobe (`fitTone`); the band's sum of the density that tone puts on
 * every bin (main lobe and side lobes, `toneDensity`), summed as the figure sums it, is held against the tone's power
 * weighted at its frequency, counted only where it lies in the band: their difference is what the window moved across the
 * edge. Broadband vibration has no line: what leaks out there is about what leaks in.
 */
export function edgeLine(p: Psd, lo: number, hi: number, total: number, weight: (f: number) => number, window: WindowName = 'hann', limit = EDGE_ERROR): EdgeLine | null {
  const r = resolutionOf(p), { density, df } = p;
  if (!(total > 0)) return null;
  let k = -1;
  for (let j = Math.max(1, Math.ceil((lo - BINS_BELOW * r) / df)); j <= Math.min(density.length - 2, Math.floor((lo + BINS_ABOVE * r) / df)); j++) if (k < 0 || density[j] > density[k]) k = j;
  if (k < 0) return null;
  while (k > 1 && density[k - 1] > density[k]) k--;
  while (k < density.length - 2 && density[k + 1] > density[k]) k++;
  const peak = k * df;
  if (peak - lo > LOBE * r || lo - peak > BINS_BELOW * r) return null;
  const around: number[] = [];
  for (let j = Math.max(1, Math.ceil((peak - 8 * r) / df)); j <= Math.min(density.length - 1, Math.floor((peak + 8 * r) / df)); j++) if (Math.abs(j * df - peak) > LOBE * r) around.push(density[j]);
  if (around.length === 0) return null;
  const continuum = median(Float64Array.from(around));
  if (!(density[k] >= LINE_OVER_CONTINUUM * continuum)) return null;
  const tone = fitTone(p, window, k, r, continuum);
  const f = tone.frequency;
  // The tone's density alone, as the band's own sum reads it; and its whole power, where it lies in the band.
  const model = new Float64Array(density.length);
  for (let j = Math.max(1, Math.floor((f - REACH * r) / df)); j <= Math.min(density.length - 1, Math.ceil((f + REACH * r) / df)); j++) model[j] = toneDensity(p, window, f, tone.power, j);
  const read = bandMeanSquare({ ...p, density: model }, lo, hi, weight);
  const inBand = f >= lo - ON_EDGE * r && f < hi;
  const truth = inBand ? tone.power * weight(Math.max(f, lo)) : 0;
  const corrected = Math.max(total - read + truth, total / MOST_TIMES ** 2);
  const error = Math.sqrt(total / corrected) - 1;
  return Math.abs(error) > limit ? { frequency: f, share: truth / corrected, error, resolution: r } : null;
}
