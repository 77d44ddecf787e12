// Filtered analytic signal, streamed block by block: each block is filtered and made analytic in one pair of transforms,
// z = IDFT(g·DFT(x)) with g = 2·G(f) on positive frequencies, G(f) on DC and Nyquist, none on negative ones (Marple,
// IEEE Trans. SP 47(9), 1999, for the analytic part). G is |H|² of a Butterworth cascade for zero-phase filtering (the
// forward-backward filter's response, as scipy.signal.sosfiltfilt), H for causal filtering, 1 for none.
// A block has `context` samples on each side whose outer `ramp` samples are tapered by half-Hann ramps; only its middle
// is kept, where the filter's kernel (died away below 1e-14 within `context − ramp` samples) never reaches the tapers.
// For a band-limited signal the Hilbert transform acts locally (Bedrosian 1963), so the ramps leave no trace.
// Before the start and after the end the signal is extended oddly (2·x₀ − x[k], as sosfiltfilt pads) or by zeros
// (causal filtering from rest). Bounded memory: one block.
import type { Section } from './butterworth.js';
import { AnalyticBlocks } from './fft-simd.js';
import { freshBuffer } from '../scratch.js';

export type Extension = 'odd' | 'zero';

/** Complex gains g[k], k = 0 … n/2 (re, im interleaved), of the analytic filter of length-n blocks, with the 1/n of the inverse transform. */
export function analyticGains(n: number, fs: number, sos: Section[] | null, zeroPhase: boolean): Float64Array {
  const g = new Float64Array(n + 2);
  for (let k = 0; k <= n / 2; k++) {
    // H(e^{jω}) = Π (b0 + b1·z⁻¹ + b2·z⁻²) / (1 + a1·z⁻¹ + a2·z⁻²), z⁻¹ = e^{−jω}, ω = 2πk/n.
    let hr = 1, hi = 0;
    if (sos) {
      const w = (2 * Math.PI * k) / n, c1 = Math.cos(w), s1 = -Math.sin(w), c2 = Math.cos(2 * w), s2 = -Math.sin(2 * w);
      for (const [b0, b1, b2, , a1, a2] of sos) {
        const nr = b0 + b1 * c1 + b2 * c2, ni = b1 * s1 + b2 * s2;
        const dr = 1 + a1 * c1 + a2 * c2, di = a1 * s1 + a2 * s2;
        const d = dr * dr + di * di;
        const qr = (nr * dr + ni * di) / d, qi = (ni * dr - nr * di) / d;
        [hr, hi] = [hr * qr - hi * qi, hr * qi + hi * qr];
      }
      if (zeroPhase) { hr = hr * hr + hi * hi; hi = 0; }
    }
    const scale = (k === 0 || k === n / 2 ? 1 : 2) / n;
    g[2 * k] = hr * scale;
    g[2 * k + 1] = hi * scale;
  }
  return g;
}

export interface AnalyticOptions {
  /** Transform length, a power of two. */
  size: number;
  /** Samples of signal on each side of a block's kept middle. */
  context: number;
  /** Tapered samples at each end of a block (≤ context). */
  ramp: number;
  extension: Extension;
  /** Where the working buffers come from (a recording's scratch, in a worker's reduction). */
  buffer?: (length: number) => Float64Array;
}

// Raised-cosine ramps by length, made once a thread: every channel's filter reads the same one.
const tapers = new Map<number, Float64Array>();
const taperOf = (ramp: number): Float64Array => tapers.get(ramp) ?? tapers.set(ramp, Float64Array.from({ length: ramp }, (_, i) => 0.5 - 0.5 * Math.cos((Math.PI * (i + 0.5)) / ramp))).get(ramp)!;

export class AnalyticFilter {
  private readonly n: number;
  private readonly context: number;
  private readonly hop: number;
  private readonly taper: Float64Array;
  /** Extended signal from bufStart on; index t of the signal sits at buf[t − bufStart]. */
  private readonly buf: Float64Array;
  private bufStart: number;
  private bufLen: number;
  private readonly work: Float64Array;
  private readonly outRe: Float64Array;
  private readonly outAbs: Float64Array;
  private readonly blocks: AnalyticBlocks;
  private seen = 0;
  private first = 0;

  constructor(
    /** The gains (analyticGains), made only the first time a thread meets `gainKey`. */
    gains: () => Float64Array, gainKey: string, o: AnalyticOptions,
    private readonly emit: (re: Float64Array, abs: Float64Array) => void,
    private readonly extension: Extension = o.extension,
  ) {
    this.n = o.size;
    this.context = o.context;
    this.hop = o.size - 2 * o.context;
    if (!(this.hop > 0) || o.ramp > o.context) throw new Error(`analytic blocks of ${o.size} samples cannot keep ${o.context} samples of context on each side`);
    this.taper = taperOf(o.ramp);
    const buffer = o.buffer ?? freshBuffer;
    this.buf = buffer(o.size);
    // The first block starts `context` samples before the signal, in the extension.
    this.bufStart = -o.context;
    this.bufLen = o.context;
    this.work = buffer(o.size);
    this.outRe = buffer(this.hop);
    this.outAbs = buffer(this.hop);
    this.blocks = new AnalyticBlocks(o.size, gains, gainKey);
  }

  push(x: Float64Array): void {
    let i = 0;
    while (i < x.length) {
      const take = Math.min(x.length - i, this.n - this.bufLen);
      // Copied sample by sample: a view of x for every block would be garbage for every block.
      const buf = this.buf, at = this.bufLen;
      for (let j = 0; j < take; j++) buf[at + j] = x[i + j];
      this.bufLen += take;
      this.seen += take;
      i += take;
      if (this.bufLen === this.n) this.block(this.seen);
    }
  }

  /** Ends the signal: extends it past the end and emits the rest. */
  finish(): void {
    const end = this.seen;
    if (end === 0) return;
    while (this.bufStart + this.context < end) {
      // Signal index of buf[j] is bufStart + j; fill what lies past the end with the extension.
      for (let j = this.bufLen; j < this.n; j++) this.buf[j] = this.after(this.bufStart + j, end);
      this.bufLen = this.n;
      this.block(end);
    }
  }

  private before(t: number): number {
    // Signal index 0 is buf[context − … ]: only called while the first block is in the buffer (bufStart = −context).
    if (this.extension === 'zero') return 0;
    const k = Math.min(-t, this.seen - 1), x0 = this.buf[this.context];
    return 2 * x0 - this.buf[this.context + k];
  }

  private after(t: number, end: number): number {
    if (this.extension === 'zero') return 0;
    const k = Math.min(t - (end - 1), end - 1), s0 = this.bufStart;
    return 2 * this.buf[end - 1 - s0] - this.buf[Math.max(end - 1 - k, s0) - s0];
  }

  /** Transforms the full buffer, emits its kept middle (up to the signal's end), and slides on by one hop. */
  private block(end: number): void {
    const n = this.n, ctx = this.context, w = this.work, taper = this.taper, r = taper.length;
    if (this.first === 0) {
      for (let t = -ctx; t < 0; t++) this.buf[t + ctx] = this.before(t);
      this.first = 1;
    }
    w.set(this.buf);
    for (let i = 0; i < r; i++) { w[i] *= taper[i]; w[n - 1 - i] *= taper[i]; }
    const from = ctx, to = Math.min(n - ctx, end - this.bufStart);
    this.blocks.run(w, from, to, this.outRe, this.outAbs);
    // A whole hop is the whole output buffer; only a last, shorter block needs views of it.
    const k = to - from;
    if (k === this.hop) this.emit(this.outRe, this.outAbs);
    else this.emit(this.outRe.subarray(0, k), this.outAbs.subarray(0, k));
    this.buf.copyWithin(0, this.hop, n);
    this.bufStart += this.hop;
    this.bufLen = n - this.hop;
  }
}
