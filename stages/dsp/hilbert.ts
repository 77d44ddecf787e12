// Envelope as the magnitude of the analytic signal, by FFT (Marple, IEEE Trans. SP 47(9), 1999), computed block-wise:
// each block is transformed with `context` samples of signal on either side, tapered by half-Hann ramps, and only its
// middle is kept. For band-limited signals the Hilbert transform acts locally (Bedrosian 1963), so the ramps leave no trace.
import type FFT from 'fft.js';
import { fftOf } from './welch.js';

export class StreamingEnvelope {
  private readonly fft: FFT;
  private readonly buf: Float64Array;
  /** Absolute index of buf[0]. The stream starts after half a block of zeros, so the record's abrupt start does not wrap
   *  (the transform is circular) onto the end of the first block. */
  private bufStart: number;
  private bufLen: number;
  /** Next absolute index whose envelope is still owed. */
  private emitted = 0;
  private readonly spec: Float64Array;
  private readonly time: Float64Array;
  private readonly work: Float64Array;
  private readonly ramp: Float64Array;

  constructor(private readonly emit: (env: Float64Array) => void, private readonly size = 16384, private readonly context = 2048) {
    this.fft = fftOf(size);
    this.bufStart = -size / 2;
    this.bufLen = size / 2;
    this.buf = new Float64Array(size);
    this.spec = new Float64Array(2 * size);
    this.time = new Float64Array(2 * size);
    this.work = new Float64Array(size);
    this.ramp = Float64Array.from({ length: context }, (_, i) => 0.5 - 0.5 * Math.cos((Math.PI * (i + 0.5)) / context));
  }

  push(x: Float64Array): void {
    let i = 0;
    while (i < x.length) {
      const take = Math.min(x.length - i, this.size - this.bufLen);
      this.buf.set(x.subarray(i, i + take), this.bufLen);
      this.bufLen += take;
      i += take;
      if (this.bufLen === this.size) {
        // Keep everything that has `context` samples of future behind it.
        const keepTo = this.bufStart + this.size - this.context;
        this.transform(this.size, this.emitted - this.bufStart, keepTo - this.bufStart, true);
        this.emitted = keepTo;
        // Slide so that `context` samples of past precede the next owed index.
        const drop = this.emitted - this.context - this.bufStart;
        this.buf.copyWithin(0, drop, this.bufLen);
        this.bufStart += drop;
        this.bufLen -= drop;
      }
    }
  }

  finish(): void {
    if (this.emitted < this.bufStart + this.bufLen) {
      // The last block has no future beyond the signal's end; it is zero-padded to the transform length.
      this.buf.fill(0, this.bufLen);
      this.transform(this.bufLen, this.emitted - this.bufStart, this.bufLen, false);
    }
  }

  /** Analytic signal of buf[0 … n) zero-padded to size, its context tapered; emits |x_a| for buf[from … to). */
  private transform(n: number, from: number, to: number, taperFuture: boolean): void {
    const N = this.size, w = this.work, ctx = this.context;
    w.set(this.buf);
    for (let i = 0; i < ctx; i++) w[i] *= this.ramp[i];
    if (taperFuture) for (let i = 0; i < ctx; i++) w[n - 1 - i] *= this.ramp[i];
    this.fft.realTransform(this.spec, w);
    this.fft.completeSpectrum(this.spec);
    // Keep DC and Nyquist, double positive frequencies, zero negative ones.
    for (let k = 1; k < N / 2; k++) { this.spec[2 * k] *= 2; this.spec[2 * k + 1] *= 2; }
    this.spec.fill(0, N + 2);
    this.fft.inverseTransform(this.time, this.spec);
    const out = new Float64Array(to - from);
    for (let i = from; i < to; i++) { const re = this.time[2 * i], im = this.time[2 * i + 1]; out[i - from] = Math.sqrt(re * re + im * im); }
    if (n < N) this.buf.fill(0);
    this.emit(out);
  }
}
