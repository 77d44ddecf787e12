// Reads big-endian bit fields from a byte array, as FLAC frames store them (RFC 9639 §9); running off the end throws.

/** Thrown when a field runs past the bytes given: the frame is cut short or its sizes are damaged. */
export class OutOfBits extends Error {}

export class BitReader {
  /** Position in bits from the start of `bytes`. */
  pos: number;
  private readonly limit: number;

  constructor(private readonly bytes: Uint8Array, startByte = 0, endByte = bytes.length) {
    this.pos = startByte * 8;
    this.limit = endByte * 8;
  }

  get bytePos(): number { return this.pos >>> 3; }

  /** An unsigned field of n ≤ 32 bits. */
  read(n: number): number {
    if (n === 0) return 0;
    if (this.pos + n > this.limit) throw new OutOfBits();
    let v = 0;
    let left = n;
    while (left > 0) {
      const byte = this.bytes[this.pos >>> 3];
      const used = this.pos & 7;
      const take = Math.min(8 - used, left);
      v = v * 2 ** take + ((byte >>> (8 - used - take)) & ((1 << take) - 1));
      this.pos += take;
      left -= take;
    }
    return v;
  }

  /** A two's complement field of n ≤ 33 bits. */
  readSigned(n: number): number {
    if (n === 0) return 0;
    const v = this.read(Math.min(n, 32)) * (n > 32 ? 2 : 1) + (n > 32 ? this.read(1) : 0);
    return v >= 2 ** (n - 1) ? v - 2 ** n : v;
  }

  /** Zero bits before the next one bit (the one is consumed). */
  readUnary(): number {
    let q = 0;
    for (;;) {
      if (this.pos >= this.limit) throw new OutOfBits();
      const used = this.pos & 7;
      const rest = (this.bytes[this.pos >>> 3] << used) & 0xff;
      if (rest === 0) { q += 8 - used; this.pos += 8 - used; continue; }
      const zeros = Math.clz32(rest) - 24;
      q += zeros;
      this.pos += zeros + 1;
      return q;
    }
  }

  /** Skips to the next byte boundary. */
  align(): void { this.pos = (this.pos + 7) & ~7; }
}
