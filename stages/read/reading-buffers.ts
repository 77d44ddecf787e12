// Buffers a thread's readers take for a recording and give back when it has been read, for the next recording.
// A recording's read buffers live as long as it is read, long enough for V8 to move them to its old generation; made
// afresh for every recording, their bytes then counted towards the old generation's limit and brought on a full
// collection about once a short recording. Kept and reused, they are made once a thread.

/** Free buffers a pool keeps at most, of each kind: enough for the few recordings a thread reads at once, no more. */
const KEPT = 64;

/** Free arrays, smallest first; one taken is the smallest long enough, seen through a view of the length asked for. */
class FreeList<T extends Float64Array | Uint8Array> {
  private readonly free: T[] = [];
  constructor(private readonly make: (length: number) => T) {}

  take(length: number): T {
    const i = this.free.findIndex((a) => a.length >= length);
    if (i < 0) return this.make(length);
    const [a] = this.free.splice(i, 1);
    return a.length === length ? a : (a.subarray(0, length) as T);
  }

  give(a: T): void {
    // A view gives back the whole array it looks into.
    const whole = (a.byteOffset === 0 && a.byteLength === a.buffer.byteLength ? a : new (a.constructor as new (b: ArrayBufferLike) => T)(a.buffer)) as T;
    let i = 0;
    while (i < this.free.length && this.free[i].length < whole.length) i++;
    this.free.splice(i, 0, whole);
    // Over the bound, the largest goes: a pool never holds more than a few recordings' worth.
    if (this.free.length > KEPT) this.free.pop();
  }
}

/** One thread's reading buffers: byte buffers for the file's bytes, sample arrays for the decoded channels. */
export class ReadingBuffers {
  private readonly bytes = new FreeList<Uint8Array>((n) => new Uint8Array(n));
  private readonly samples = new FreeList<Float64Array>((n) => new Float64Array(n));

  /** A byte buffer of `length` bytes (as a Buffer, for file reads); its contents are whatever was last read into it. */
  takeBytes(length: number): Buffer {
    const a = this.bytes.take(length);
    return Buffer.from(a.buffer, a.byteOffset, length);
  }

  /** `channels` sample arrays of `length` samples each; their contents are whatever was last decoded into them. */
  takeSamples(channels: number, length: number): Float64Array[] {
    return Array.from({ length: channels }, () => this.samples.take(length));
  }

  /** Gives buffers this pool handed out back, once nothing reads them any more. */
  give(bytes: Buffer | null, samples: Float64Array[]): void {
    if (bytes) this.bytes.give(new Uint8Array(bytes.buffer, bytes.byteOffset, bytes.byteLength));
    for (const s of samples) this.samples.give(s);
  }
}

/** The buffers of the thread this module runs in (each worker thread loads its own copy of the module). */
export const THREAD_READING_BUFFERS = new ReadingBuffers();
