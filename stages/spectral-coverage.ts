// Whether a Welch spectrum's power agrees with the exact variance of the samples it was taken from. Welch's estimate
// weights each sample by the squared windows of the segments over it (Welch 1967): with Hann segments at 50 % overlap
// between 0.5 and 1 of the mean (sin⁴ + cos⁴), the first and last half segment down to 0, and a tail shorter than a hop
// not at all. A steady signal reads right whatever the weights; a level that changes through the recording does not, and
// the spectrum's total power then departs from the variance (Parseval: the total is the segments' windowed mean square).
import type { Psd } from './dsp/welch.js';

/** Disagreement (dB, either way) past which the note is made: about 6 % in RMS (our choice, above a steady signal's spread). */
export const LEVEL_CHANGE_DB = 0.5;

/**
 * Total power of a density (unit²), Σ density·df over every bin (rectangle rule on the bins, whose one-sided sum is the
 * two-sided periodograms' by Parseval's theorem).
 */
export function spectrumPower(psd: Psd): number {
  let sum = 0;
  for (let k = 0; k < psd.density.length; k++) sum += psd.density[k];
  return sum * psd.df;
}

/** Running sums of a stream's finite samples about its first one, for its exact variance (shifted sums, Chan, Golub & LeVeque 1983). */
export class StreamVariance {
  private n = 0;
  private shift = 0;
  private s1 = 0;
  private s2 = 0;
  add(x: Float64Array, length = x.length): void {
    if (this.n === 0 && length > 0) this.shift = x[0];
    let s1 = 0, s2 = 0;
    for (let i = 0; i < length; i++) { const d = x[i] - this.shift; s1 += d; s2 += d * d; }
    this.n += length; this.s1 += s1; this.s2 += s2;
  }
  /** Samples taken in. */
  get count(): number { return this.n; }
  /** Population variance, or null before any sample. */
  variance(): number | null { return this.n > 0 ? Math.max(0, this.s2 - (this.s1 * this.s1) / this.n) / this.n : null; }
}

export interface CoverageNote {
  /** The channel's name. */
  name: string;
  /** The spectrum, as the note names it ("spectrum (4096-sample segments)"). */
  what: string;
  /** The figures read from it. */
  figures: string;
  /** Seconds of recording half a segment spans: the stretch at each end weighted down. */
  halfSegment: number;
  /** The spectrum's bin spacing (Hz): per-segment mean removal leaves out power below about one bin. */
  df: number;
}

/**
 * Four chance spreads (dB) of a Hann-weighted mean square against the plain one over `samples` of noise: for Gaussian
 * white noise the weighted mean of x² has a relative variance 2·Σw⁴/(Σw²)² ≈ 3.9 over n samples (derived); counted on
 * half the samples, as a band-limited stream (a decimated one, passing two thirds of its band) holds fewer independent
 * ones, that is 10·lg e × √(8/n) a spread. A short recording's one periodogram can miss its variance so far with a steady signal.
 */
export const chanceLimitDb = (samples: number): number => 4 * 4.343 * Math.sqrt(8 / samples);

/**
 * The note for a spectrum whose total power departs from the exact variance of its `samples` by more than `limitDb`, or
 * by more than chance allows so few samples, naming its figures and the size; '' when they agree (a steady signal) or
 * either is zero.
 */
export function coverageNote(c: CoverageNote, spectral: number, variance: number | null, samples = Infinity, limitDb = LEVEL_CHANGE_DB): string {
  if (variance === null || !(variance > 0) || !(spectral > 0)) return '';
  const db = 10 * Math.log10(spectral / variance);
  if (Math.abs(db) <= Math.max(limitDb, chanceLimitDb(samples))) return '';
  const ratio = Number((spectral / variance).toPrecision(3));
  return `${c.name}: the ${c.what} holds ${ratio} of the variance of the samples it was taken from (${db > 0 ? '+' : ''}${db.toFixed(1)} dB; a steady signal gives 1): `
    + `the level changed through the recording, and Welch's segments weight its first and last ${Number(c.halfSegment.toPrecision(3))} s less than its middle`
    + `${db < 0 ? ` (or the channel holds power below about ${Number(c.df.toPrecision(3))} Hz, which each segment's mean removal leaves out)` : ''}, `
    + `so ${c.figures} may read ${db < 0 ? 'low' : 'high'} against the time-domain figures (rms, lzeq); an event near either end counts least`;
}
