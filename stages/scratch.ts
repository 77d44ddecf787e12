// Working buffers a recording's stages borrow and the worker takes back once the recording is reduced, for the next
// recording to reuse: made new for every recording, a few megabytes of them a recording made the worker's collector
// run a full collection every two or three recordings.

/** Buffers given back, by length, for later recordings; at most `keepBytes` of them are kept. */
export class ScratchBuffers {
  private readonly free = new Map<number, Float64Array[]>();
  private kept = 0;
  constructor(readonly keepBytes = 64 << 20) {}

  /** A zeroed buffer of `length` doubles: one given back, or a new one. */
  take(length: number): Float64Array {
    const a = this.free.get(length)?.pop();
    if (!a) return new Float64Array(length);
    this.kept -= a.byteLength;
    return a.fill(0);
  }

  /** Takes buffers back; nothing may use them afterwards. Beyond `keepBytes`, they are left to the collector. */
  give(buffers: Iterable<Float64Array>): void {
    for (const b of buffers) {
      if (this.kept + b.byteLength > this.keepBytes) continue;
      const list = this.free.get(b.length) ?? this.free.set(b.length, []).get(b.length)!;
      list.push(b);
      this.kept += b.byteLength;
    }
  }
}

/** The worker thread's buffers, shared by the recordings it reduces one after another (or a few at once). */
export const THREAD_SCRATCH = new ScratchBuffers();

/** A new buffer, for code run without a recording's scratch (tests, one-off uses). */
export const freshBuffer = (length: number): Float64Array => new Float64Array(length);
