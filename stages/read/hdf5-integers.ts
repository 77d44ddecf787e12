// An HDF5 integer's value from the storage word h5wasm hands over: h5wasm copies the stored word as it lies (its byte
// order made little-endian), so a type whose precision is narrower than its storage, or that starts past bit 0, comes with
// its padding bits and without its sign. The value is `precision` bits from bit `offset`, two's complement when signed
// (HDF5 User's Guide, atomic datatype properties: precision, offset, padding).
import type { StoredType } from './hdf5-stored-type.js';

export type IntegerType = Pick<StoredType, 'size' | 'signed' | 'precision' | 'offset'>;

/** Whether the type's value fills its storage, as the typed arrays h5wasm reads into already give it. */
export const fillsStorage = (t: IntegerType) => t.offset === 0 && t.precision === 8 * t.size;

/** The stored word's value, exact up to 2^53 (a 64-bit word's beyond that rounded once, as Number() does). */
export function integerOf(t: IntegerType): (word: number | bigint) => number {
  if (fillsStorage(t)) return t.size === 8 ? (w) => Number(w) : (w) => w as number;
  if (t.size === 8) {
    const shift = BigInt(t.offset), p = t.precision;
    // asUintN reads the word's bits whether h5wasm gave it signed or unsigned.
    return t.signed ? (w) => Number(BigInt.asIntN(p, BigInt.asUintN(64, BigInt(w)) >> shift)) : (w) => Number(BigInt.asUintN(p, BigInt.asUintN(64, BigInt(w)) >> shift));
  }
  const storage = 2 ** (8 * t.size), below = 2 ** t.offset, span = 2 ** t.precision, half = span / 2;
  // Division and remainder rather than bit operators: exact in doubles for words of up to 32 bits, whatever their sign.
  return (w) => {
    const word = (w as number) < 0 ? (w as number) + storage : (w as number);
    const v = Math.floor(word / below) % span;
    return t.signed && v >= half ? v - span : v;
  };
}

/**
 * A stored word as a sample on ±1 of the type's full scale, 2^(precision − 1) (a 24-bit precision reads as 24-bit codes
 * whatever its storage), unsigned types as offset binary, as the raw and WAV readers do.
 */
export function fullScaleOf(t: IntegerType): (word: number | bigint) => number {
  const full = 2 ** (t.precision - 1);
  if (t.size === 8 && !t.signed) {
    // The offset taken before rounding to a double: one rounding, not two.
    const shift = BigInt(t.offset), p = t.precision, half = 1n << BigInt(t.precision - 1);
    return (w) => Number(BigInt.asUintN(p, BigInt.asUintN(64, BigInt(w)) >> shift) - half) / full;
  }
  const value = integerOf(t);
  return t.signed ? (w) => value(w) / full : (w) => (value(w) - full) / full;
}
