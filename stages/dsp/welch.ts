// Welch's method: averaged modified periodograms (Welch, IEEE Trans. Audio Electroacoust. 15(2), 1967), streaming.
import { PeriodogramSum, realDft } from './fft-simd.js';
import { makeWindow, windowOf, type WindowName } from './window.js';

export interface WelchOptions { segment: number; overlap: number; window: WindowName }

export interface Psd {
  /** One-sided power spectral density, unit²/Hz, bins k·df for k = 0 … segment/2. */
  density: Float64Array;
  df: number;
  segments: number;
  /** Transform length: the segment asked for, so every recording's spectrum has the same bins. */
  segment: number;
  /** Samples each periodogram's window spans: the segment, or the whole recording (or its longest gap-free stretch) when shorter (zero-padded to the segment). */
  length: number;
  /** First sample of the gap-free stretch the one periodogram was taken from, where missing samples left no whole segment. */
  from?: number;
  /** Samples of the recording the periodograms' windows span together (overlaps counted once). */
  covered?: number;
  /** Highest frequency the density may be read to, when below the Nyquist frequency (a decimated stream's spectrum). */
  upTo?: number;
}

/** Frequency resolution: the rate of the samples over those one periodogram spans (df·segment is that rate). */
export const resolutionOf = (p: Psd): number => (p.df * p.segment) / p.length;

const isPowerOfTwo = (n: number) => n >= 2 && (n & (n - 1)) === 0;

/** Fewest samples a recording shorter than one segment needs for a spectrum of its own. */
export const FEWEST_SAMPLES = 8;

/**
 * Accumulates Welch's estimate chunk by chunk, holding one segment of samples (in the FFT kernels' memory). Missing
 * samples (NaN, ±Inf) break the stream: the segments go on from the first finite sample after a gap, and no segment
 * holds a missing sample, so the estimate is that of the finite data. Until a whole segment is found, the longest
 * gap-free stretch so far is kept (under one segment), for a spectrum where no segment is ever whole.
 */
export class Welch {
  private fill = 0;
  private readonly hop: number;
  private count = 0;
  private gaps = false;
  private readonly win: Float64Array;
  private readonly sums: PeriodogramSum;
  private density: Psd | null | undefined;
  // Samples pushed so far, where the current gap-free stretch starts, and its segments.
  private seen = 0;
  private stretchFrom = 0;
  private stretchSegments = 0;
  private covered = 0;
  // The longest gap-free stretch ended by a gap while no segment was whole, and where it starts.
  private longest: Float64Array | null = null;
  private longestLength = 0;
  private longestFrom = 0;

  /** `longestStretch`: without a whole gap-free segment, give the longest gap-free stretch's periodogram rather than none. */
  constructor(private readonly fs: number, private readonly o: WelchOptions, private readonly longestStretch = true) {
    if (!isPowerOfTwo(o.segment)) throw new Error(`spectrum.segment must be a power of two, got ${o.segment}`);
    this.hop = Math.max(1, o.segment - Math.floor(o.segment * o.overlap));
    this.win = makeWindow(o.window, o.segment);
    this.sums = new PeriodogramSum(o.segment, this.win, o.window);
  }

  /** `missing`: how many of x are missing (NaN or infinite), as the channel's fused pass counted them; 0 takes the plain path. */
  push(x: Float64Array, missing = 0): void {
    if (missing === 0) { this.add(x); this.seen += x.length; return; }
    // A chunk with gaps (rare): its finite runs one by one, the held samples dropped at each gap.
    this.gaps = true;
    let start = 0;
    for (let i = 0; i < x.length; i++) {
      if (x[i] - x[i] === 0) continue;
      if (i > start) this.add(x.subarray(start, i));
      this.endStretch(this.seen + i + 1);
      start = i + 1;
    }
    if (start < x.length) this.add(start === 0 ? x : x.subarray(start));
    this.seen += x.length;
  }

  // Every whole segment of the held samples and the stretch: mean removed (detrend 'constant'), windowed, |FFT|² added
  // (welch_add in stages/dsp/fft-simd.c); the rest stays held for the next stretch.
  private add(x: Float64Array): void {
    const { added, held } = this.sums.addStretch(this.fill, x, this.hop);
    // A stretch's first segment spans a whole segment of the recording, each later one a hop more.
    if (added > 0) this.covered += (this.stretchSegments === 0 ? this.o.segment - this.hop : 0) + added * this.hop;
    this.stretchSegments += added;
    this.count += added;
    this.fill = held;
  }

  // A gap ends the stretch: while no segment is whole, the stretch is all held, and kept if the longest so far.
  private endStretch(next: number): void {
    if (this.longestStretch && this.count === 0 && this.fill > this.longestLength) {
      this.longest ??= new Float64Array(this.o.segment);
      this.longest.set(this.sums.segment().subarray(0, this.fill));
      this.longestLength = this.fill;
      this.longestFrom = this.stretchFrom;
    }
    this.fill = 0;
    this.stretchSegments = 0;
    this.stretchFrom = next;
  }

  /** Whether a missing sample broke the stream. */
  get brokenByGaps(): boolean { return this.gaps; }

  /**
   * The density, once the signal has ended (later pushes are not counted). A recording without gaps that is shorter than
   * one segment is one periodogram of its whole length, zero-padded to the segment; where gaps leave no whole segment, so
   * is the longest gap-free stretch (the earliest of equals); null when that (or a gap-free recording) has fewer than
   * FEWEST_SAMPLES.
   */
  result(): Psd | null {
    if (this.density !== undefined) return this.density;
    if (this.count > 0) return (this.density = { ...scaleDensity(this.sums.end(), this.count, this.win, this.fs, this.o.segment), covered: this.covered });
    const last = this.sums.segment().slice(0, this.fill);
    this.sums.end();
    if (this.gaps && !this.longestStretch) return (this.density = null);
    const earlier = this.gaps && this.longest !== null && this.longestLength >= last.length;
    const x = earlier ? this.longest!.subarray(0, this.longestLength) : last, from = earlier ? this.longestFrom : this.stretchFrom;
    if (x.length < FEWEST_SAMPLES) return (this.density = null);
    const win = windowOf(this.o.window, x.length);
    const psd = scaleDensity(paddedPeriodogram(x, win, this.o.segment), 1, win, this.fs, this.o.segment);
    return (this.density = { ...psd, covered: x.length, ...(this.gaps ? { from } : {}) });
  }
}

// Modified periodogram of x (n samples, mean removed, windowed by w) zero-padded to `nfft` points, |X[k]|² for k = 0 … nfft/2:
// scipy.signal.welch(x, nperseg=n, nfft=nfft) takes one segment so (Welch 1967; zero padding interpolates the spectrum, Harris 1978).
export function paddedPeriodogram(x: Float64Array, w: Float64Array, nfft: number): Float64Array {
  const n = x.length, y = new Float64Array(nfft);
  let mean = 0;
  for (let i = 0; i < n; i++) mean += x[i];
  mean /= n;
  for (let i = 0; i < n; i++) y[i] = w[i] * (x[i] - mean);
  const re = new Float64Array(nfft / 2 + 1), im = new Float64Array(nfft / 2 + 1);
  realDft(y, re, im);
  for (let k = 0; k <= nfft / 2; k++) re[k] = re[k] * re[k] + im[k] * im[k];
  return re;
}

// Density scaling 1/(fs·Σw²), one-sided: interior bins doubled (DC and Nyquist appear once in the two-sided sum).
function scaleDensity(sum: Float64Array, count: number, win: Float64Array, fs: number, nfft: number): Psd {
  const n = win.length;
  let s2 = 0;
  for (let i = 0; i < n; i++) s2 += win[i] * win[i];
  const scale = 1 / (fs * s2 * count);
  // A loop, not map: map's callback hands each double back boxed, 2,049 small allocations a spectrum.
  const density = new Float64Array(sum.length);
  for (let k = 0; k < sum.length; k++) density[k] = sum[k] * scale * (k === 0 || k === nfft / 2 ? 1 : 2);
  return { density, df: fs / nfft, segments: count, segment: nfft, length: n };
}

/**
 * Mean square in [low, high) Hz: bin k holds power density[k]·df spread over [f − df/2, f + df/2), and counts by the
 * fraction inside the band; `weight(f)` scales each bin (1/(2πf)² integrates acceleration to velocity), and without one
 * every bin counts in full. Called for every band of every channel: a weight given should be one function for all.
 */
export function bandMeanSquare(psd: Psd, low: number, high: number, weight: ((f: number) => number) | null = null): number {
  const { density, df } = psd;
  let ms = 0;
  const kFrom = Math.max(0, Math.floor(low / df - 0.5)), kTo = Math.min(density.length - 1, Math.ceil(high / df + 0.5));
  for (let k = kFrom; k <= kTo; k++) {
    // DC and Nyquist bins are folded halves: DC's power lies in [0, df/2), Nyquist's in [fN − df/2, fN].
    const a = Math.max(0, (k - 0.5) * df), b = Math.min((density.length - 1) * df, (k + 0.5) * df);
    const overlap = Math.min(b, high) - Math.max(a, low);
    if (overlap > 0) ms += ((weight === null ? 1 : weight(k * df)) * density[k] * df * overlap) / (b - a);
  }
  return ms;
}
