// Integer PCM of any valid bit depth (1–64) in containers of 1–8 bytes, normalised to ±1 of the valid bits' full scale.
import type { SampleDecoder } from './interleaved.js';

/**
 * Decoder for one sample of `containerBytes` holding `validBits` significant bits, left-justified as WAVE_FORMAT_EXTENSIBLE
 * specifies (the unused low bits are dropped). One-byte containers are offset binary (unsigned), wider ones two's complement,
 * as the RIFF/WAVE specification defines PCM. `rightJustified` reads the valid bits from the container's low end instead
 * (the top bits a sign extension), as some writers put them behind a plain PCM fmt chunk.
 */
export function pcmDecoder(containerBytes: number, validBits: number, little: boolean, rightJustified = false): SampleDecoder {
  const containerBits = containerBytes * 8;
  if (!(containerBytes >= 1 && containerBytes <= 8 && validBits >= 1 && validBits <= containerBits)) {
    throw new RangeError(`PCM of ${validBits} valid bits in ${containerBytes}-byte containers is not possible`);
  }
  if (rightJustified && containerBytes === 1) throw new RangeError('right-justified PCM needs containers of 2 bytes or more');
  // Right-justified, the container's signed value is the sample itself: nothing to drop.
  const drop = rightJustified ? 0 : containerBits - validBits;
  const fullScale = 2 ** (validBits - 1);
  if (containerBytes === 1) return (v, at) => ((v.getUint8(at) >> drop) - fullScale) / fullScale;
  if (containerBytes <= 6) {
    // Up to 48 bits: exact in a double. Low byte first (or last), the top byte signed.
    const read = containerBytes === 2 ? (v: DataView, at: number) => v.getInt16(at, little)
      : containerBytes === 4 ? (v: DataView, at: number) => v.getInt32(at, little)
      : signedBytes(containerBytes, little);
    const step = 2 ** drop;
    return drop === 0 ? (v, at) => read(v, at) / fullScale : (v, at) => Math.floor(read(v, at) / step) / fullScale;
  }
  // 7 and 8 bytes exceed a double's 53-bit integers: shift exactly as BigInt, then round once to the nearest double.
  const shift = BigInt(drop);
  const read = containerBytes === 8 ? (v: DataView, at: number) => v.getBigInt64(at, little) : signedBig(containerBytes, little);
  return (v, at) => Number(read(v, at) >> shift) / fullScale;
}

/** A signed integer of 3, 5 or 6 bytes, exact. */
export function signedBytes(n: number, little: boolean): (v: DataView, at: number) => number {
  return little
    ? (v, at) => { let x = v.getInt8(at + n - 1); for (let i = n - 2; i >= 0; i--) x = x * 256 + v.getUint8(at + i); return x; }
    : (v, at) => { let x = v.getInt8(at); for (let i = 1; i < n; i++) x = x * 256 + v.getUint8(at + i); return x; };
}

/** A signed integer of 7 bytes as BigInt. */
function signedBig(n: number, little: boolean): (v: DataView, at: number) => bigint {
  return (v, at) => {
    let x = BigInt(little ? v.getInt8(at + n - 1) : v.getInt8(at));
    for (let i = 1; i < n; i++) x = (x << 8n) | BigInt(v.getUint8(little ? at + n - 1 - i : at + i));
    return x;
  };
}
