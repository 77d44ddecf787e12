// Passes a stream on without its first and last `edge` samples, holding back no more than `edge` samples.
export class EdgeTrim {
  private skipped = 0;
  private held = new Float64Array(0);
  constructor(private readonly edge: number, private readonly emit: (x: Float64Array) => void) {}

  push(x: Float64Array): void {
    let from = 0;
    if (this.skipped < this.edge) {
      from = Math.min(x.length, this.edge - this.skipped);
      this.skipped += from;
    }
    const body = x.subarray(from);
    if (body.length === 0) return;
    const all = new Float64Array(this.held.length + body.length);
    all.set(this.held);
    all.set(body, this.held.length);
    const out = all.length - this.edge;
    if (out > 0) this.emit(all.subarray(0, out));
    this.held = all.slice(Math.max(0, out));
  }
}
