// Passes a stream on without its first and last `edge` samples, holding back no more than `edge` samples (in a buffer
// that grows only when a longer piece arrives).
import { freshBuffer } from '../scratch.js';

export class EdgeTrim {
  private skipped = 0;
  private held = 0;
  private buf: Float64Array;
  // The last view emitted, reused while pieces keep their length: the envelope emits one a block.
  private view: Float64Array | null = null;
  constructor(private readonly edge: number, private readonly emit: (x: Float64Array) => void, buffer: (length: number) => Float64Array = freshBuffer) {
    this.buf = buffer(edge + 4096);
  }

  push(x: Float64Array): void {
    let from = 0;
    if (this.skipped < this.edge) {
      from = Math.min(x.length, this.edge - this.skipped);
      this.skipped += from;
    }
    const body = x.length - from;
    if (body === 0) return;
    if (this.held + body > this.buf.length) {
      const grown = new Float64Array(this.edge + body);
      grown.set(this.buf.subarray(0, this.held));
      this.buf = grown;
      this.view = null;
    }
    this.buf.set(from === 0 ? x : x.subarray(from), this.held);
    const total = this.held + body, out = total - this.edge;
    if (out > 0) {
      if (this.view === null || this.view.length !== out) this.view = this.buf.subarray(0, out);
      this.emit(this.view);
      this.buf.copyWithin(0, out, total);
      this.held = this.edge;
    } else this.held = total;
  }
}
