// Text gathered as UTF-8 bytes as it is made: a long text built from many pieces holds no strings on the heap meanwhile.
const utf8 = new TextEncoder();

export class TextBytes {
  private bytes: Uint8Array;
  private length = 0;
  constructor(capacity = 64 << 10) { this.bytes = new Uint8Array(capacity); }

  /** Adds the text; returns how many bytes it took. */
  add(text: string): number {
    // A UTF-16 code unit takes at most 3 bytes in UTF-8.
    if (this.length + text.length * 3 > this.bytes.length) {
      const grown = new Uint8Array(Math.max(2 * this.bytes.length, this.length + text.length * 3));
      grown.set(this.bytes.subarray(0, this.length));
      this.bytes = grown;
    }
    const written = utf8.encodeInto(text, this.bytes.subarray(this.length)).written;
    this.length += written;
    return written;
  }

  /** The bytes gathered, in an array of their own (so they can be moved to another thread). */
  done(): Uint8Array { return this.bytes.slice(0, this.length); }
}
