// Welch's method: averaged modified periodograms (Welch, IEEE Trans. Audio Electroacoust. 15(2), 1967), streaming.
import { PeriodogramSum, periodogramAdd } from './fft-simd.js';
import { makeWindow, type WindowName } from './window.js';

export interface WelchOptions { segment: number; overlap: number; window: WindowName }

export interface Psd {
  /** One-sided power spectral density, unit²/Hz, bins k·df for k = 0 … segment/2. */
  density: Float64Array;
  df: number;
  segments: number;
  /** Segment length actually used (shorter than asked for when the recording is). */
  segment: number;
}

const isPowerOfTwo = (n: number) => n >= 2 && (n & (n - 1)) === 0;

/** Accumulates Welch's estimate chunk by chunk, holding one segment of samples (in the FFT kernels' memory). */
export class Welch {
  private fill = 0;
  private readonly hop: number;
  private count = 0;
  private readonly win: Float64Array;
  private readonly sums: PeriodogramSum;
  private density: Psd | null | undefined;

  constructor(private readonly fs: number, private readonly o: WelchOptions) {
    if (!isPowerOfTwo(o.segment)) throw new Error(`spectrum.segment must be a power of two, got ${o.segment}`);
    this.hop = Math.max(1, o.segment - Math.floor(o.segment * o.overlap));
    this.win = makeWindow(o.window, o.segment);
    this.sums = new PeriodogramSum(o.segment, this.win, o.window);
  }

  push(x: Float64Array): void {
    // Every whole segment of the held samples and the chunk: mean removed (detrend 'constant'), windowed, |FFT|² added
    // (welch_add in stages/dsp/fft-simd.c); the rest stays held for the next chunk.
    const { added, held } = this.sums.addStretch(this.fill, x, this.hop);
    this.count += added;
    this.fill = held;
  }

  /** The density, once the signal has ended (later pushes are not counted); a recording shorter than one segment is
   *  analysed as one segment of the largest power of two it fills. */
  result(): Psd | null {
    if (this.density !== undefined) return this.density;
    if (this.count > 0) return (this.density = scaleDensity(this.sums.end(), this.count, this.win, this.fs));
    const n = 1 << Math.floor(Math.log2(Math.max(1, this.fill)));
    const head = this.sums.segment().slice(0, n);
    this.sums.end();
    if (n < 8) return (this.density = null);
    const win = makeWindow(this.o.window, n);
    const sum = new Float64Array(n / 2 + 1);
    periodogramAdd(head, win, this.o.window, sum);
    return (this.density = scaleDensity(sum, 1, win, this.fs));
  }
}

// Density scaling 1/(fs·Σw²), one-sided: interior bins doubled (DC and Nyquist appear once in the two-sided sum).
function scaleDensity(sum: Float64Array, count: number, win: Float64Array, fs: number): Psd {
  const n = win.length;
  let s2 = 0;
  for (let i = 0; i < n; i++) s2 += win[i] * win[i];
  const scale = 1 / (fs * s2 * count);
  // A loop, not map: map's callback hands each double back boxed, 2,049 small allocations a spectrum.
  const density = new Float64Array(sum.length);
  for (let k = 0; k < sum.length; k++) density[k] = sum[k] * scale * (k === 0 || k === n / 2 ? 1 : 2);
  return { density, df: fs / n, segments: count, segment: n };
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
