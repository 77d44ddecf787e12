// The two CRCs of a FLAC frame (RFC 9639 §9.1.8, §9.3): CRC-8 with polynomial x^8 + x^2 + x + 1 over the header,
// CRC-16 with polynomial x^16 + x^15 + x^2 + 1 over the whole frame; both with initial value 0, no reflection.

function table(bits: 8 | 16, poly: number): Uint16Array {
  const top = 1 << (bits - 1), mask = (1 << bits) - 1;
  return Uint16Array.from({ length: 256 }, (_, i) => {
    let c = i << (bits - 8);
    for (let k = 0; k < 8; k++) c = c & top ? ((c << 1) ^ poly) & mask : (c << 1) & mask;
    return c;
  });
}
const CRC8 = table(8, 0x07);
const CRC16 = table(16, 0x8005);

export function crc8(b: Uint8Array, from: number, to: number): number {
  let c = 0;
  for (let i = from; i < to; i++) c = CRC8[c ^ b[i]];
  return c;
}

export function crc16(b: Uint8Array, from: number, to: number): number {
  let c = 0;
  for (let i = from; i < to; i++) c = ((c << 8) & 0xffff) ^ CRC16[(c >> 8) ^ b[i]];
  return c;
}
