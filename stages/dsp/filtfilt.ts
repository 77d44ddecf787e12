// Zero-phase filtering, forward then backward, streamed: the same result as scipy.signal.sosfiltfilt (odd extension of
// 3·(2·sections + 1 − first-order sections) samples at each end, step-state start), with the backward pass run block-wise
// from far enough ahead that the impulse response has died below 1e-14 (Gustafsson, IEEE Trans. SP 44(4), 1996, for the edges).
import type { Section } from './butterworth.js';
import { slowestPoleRadius } from './butterworth.js';
import { SosFilter, sosStepState } from './sosfilt.js';

export class ZeroPhaseFilter {
  readonly padlen: number;
  private readonly lookahead: number;
  private readonly block: number;
  private readonly zi: Float64Array;
  private forward: SosFilter | null = null;
  private head: number[] = [];
  /** Forward-filtered samples not yet passed backward. */
  private fwd: Float64Array;
  private fwdLen = 0;
  /** The last padlen + 1 inputs, for the odd extension at the end. */
  private readonly tail: Float64Array;
  private seen = 0;
  private scratch: Float64Array;

  constructor(private readonly sos: Section[], private readonly emit: (y: Float64Array) => void) {
    const firstOrder = Math.min(sos.filter((s) => s[2] === 0).length, sos.filter((s) => s[5] === 0).length);
    this.padlen = 3 * (2 * sos.length + 1 - firstOrder);
    const r = slowestPoleRadius(sos);
    this.lookahead = Math.min(1 << 22, Math.ceil(Math.log(1e-14) / Math.log(Math.min(r, 1 - 1e-12))) + 1);
    this.block = Math.max(this.lookahead, 16384);
    this.fwd = new Float64Array(this.block + this.lookahead);
    this.scratch = new Float64Array(this.block + this.lookahead);
    this.tail = new Float64Array(this.padlen + 1);
    this.zi = sosStepState(sos);
  }

  push(x: Float64Array): void {
    for (let i = 0; i < x.length; i++) this.tail[(this.seen + i) % this.tail.length] = x[i];
    this.seen += x.length;
    if (!this.forward) {
      const earlier = this.head.length;
      for (let i = 0; i < x.length && this.head.length <= this.padlen; i++) this.head.push(x[i]);
      if (this.head.length <= this.padlen) return;
      // Odd extension before the start: 2·x0 − x[padlen…1], filtered from the step state scaled to its first value.
      const x0 = this.head[0];
      const ext = Float64Array.from({ length: this.padlen }, (_, i) => 2 * x0 - this.head[this.padlen - i]);
      this.forward = new SosFilter(this.sos, this.zi.map((z) => z * ext[0]));
      this.forward.process(ext, ext);
      // Samples held from earlier chunks go first, then the whole of this chunk.
      if (earlier > 0) this.addForward(Float64Array.from(this.head.slice(0, earlier)));
      this.head = [];
      this.addForward(x);
      return;
    }
    this.addForward(x);
  }

  private addForward(x: Float64Array): void {
    let i = 0;
    while (i < x.length) {
      const take = Math.min(x.length - i, this.fwd.length - this.fwdLen);
      const dst = this.fwd.subarray(this.fwdLen, this.fwdLen + take);
      this.forward!.process(x.subarray(i, i + take), dst);
      this.fwdLen += take;
      i += take;
      if (this.fwdLen === this.fwd.length) this.flushBlock();
    }
  }

  /** Backward pass over the buffer from zero state at its end; the first `block` outputs have full lookahead. */
  private flushBlock(): void {
    const n = this.fwdLen, s = this.scratch.subarray(0, n);
    for (let i = 0; i < n; i++) s[i] = this.fwd[n - 1 - i];
    new SosFilter(this.sos).process(s, s);
    const out = new Float64Array(this.block);
    for (let i = 0; i < this.block; i++) out[i] = s[n - 1 - i];
    this.emit(out);
    this.fwd.copyWithin(0, this.block, n);
    this.fwdLen = n - this.block;
  }

  /** Ends the signal; false when it was too short to filter (at most padlen samples, as scipy refuses too). */
  finish(): boolean {
    if (!this.forward) return false;
    // Odd extension after the end: 2·x_last − x[n−2 … n−1−padlen].
    const L = this.tail.length, at = (k: number) => this.tail[(((this.seen - 1 - k) % L) + L) % L];
    const last = at(0);
    const ext = Float64Array.from({ length: this.padlen }, (_, i) => 2 * last - at(i + 1));
    const total = this.fwdLen + this.padlen;
    const y = new Float64Array(total);
    y.set(this.fwd.subarray(0, this.fwdLen));
    this.forward.process(ext, y.subarray(this.fwdLen));
    // Exact backward pass from the end, started from the step state scaled to the last forward value.
    const r = new Float64Array(total);
    for (let i = 0; i < total; i++) r[i] = y[total - 1 - i];
    new SosFilter(this.sos, this.zi.map((z) => z * r[0])).process(r, r);
    const out = new Float64Array(this.fwdLen);
    for (let i = 0; i < this.fwdLen; i++) out[i] = r[total - 1 - i];
    if (out.length) this.emit(out);
    return true;
  }
}
