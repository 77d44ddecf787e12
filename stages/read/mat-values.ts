// Numbers stored in a MAT-file element, decoded into samples: the stored type may be narrower than the array's class
// (MATLAB keeps whole-number doubles as miUINT8, miINT16…), so the class, not the stored type, sets the full scale.
import { CLASS_BITS, MI, view } from './mat-element.js';

const HOST_LITTLE = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;

/** Turns a stored value into a sample: integer classes to ±1 of their full scale (unsigned ones as offset binary), as the HDF5 reader does. */
export function normaliserOf(cls: number): { scale: number; shift: number } {
  const c = CLASS_BITS[cls];
  if (!c) return { scale: 1, shift: 0 };
  const full = 2 ** (c.bits - 1);
  return { scale: 1 / full, shift: c.signed ? 0 : -full };
}

/**
 * Decodes `count` values of type `type` from `bytes` into out[at], out[at + stride], …, each as (v + shift) × scale.
 * `bytes` must start at a multiple of 8 in its buffer for the typed-array path, as the reader's scratch buffers do.
 */
export function decodeInto(bytes: Uint8Array, type: number, little: boolean, count: number, out: Float64Array, at: number, stride: number, { scale, shift }: { scale: number; shift: number }): void {
  if (little === HOST_LITTLE && bytes.byteOffset % 8 === 0) {
    const b = bytes.buffer, o = bytes.byteOffset;
    const values = type === MI.DOUBLE ? new Float64Array(b, o, count) : type === MI.SINGLE ? new Float32Array(b, o, count)
      : type === MI.INT8 ? new Int8Array(b, o, count) : type === MI.UINT8 ? new Uint8Array(b, o, count)
        : type === MI.INT16 ? new Int16Array(b, o, count) : type === MI.UINT16 ? new Uint16Array(b, o, count)
          : type === MI.INT32 ? new Int32Array(b, o, count) : type === MI.UINT32 ? new Uint32Array(b, o, count) : null;
    if (values) {
      // Without a shift the value is only scaled, so a stored −0 keeps its sign (−0 + 0 is +0).
      if (shift === 0) for (let i = 0, j = at; i < count; i++, j += stride) out[j] = values[i] * scale;
      else for (let i = 0, j = at; i < count; i++, j += stride) out[j] = (values[i] + shift) * scale;
      return;
    }
  }
  if (type === MI.INT64 || type === MI.UINT64) {
    // The shift taken in integers before the one rounding to a double: a uint64 code's offset binary rounded twice could land a step off.
    const v = view(bytes), big = BigInt(shift);
    const read = type === MI.INT64 ? (i: number) => v.getBigInt64(8 * i, little) : (i: number) => v.getBigUint64(8 * i, little);
    for (let i = 0, j = at; i < count; i++, j += stride) out[j] = Number(read(i) + big) * scale;
    return;
  }
  const v = view(bytes);
  const read: (i: number) => number =
    type === MI.DOUBLE ? (i) => v.getFloat64(8 * i, little) : type === MI.SINGLE ? (i) => v.getFloat32(4 * i, little)
      : type === MI.INT8 ? (i) => v.getInt8(i) : type === MI.UINT8 ? (i) => v.getUint8(i)
        : type === MI.INT16 ? (i) => v.getInt16(2 * i, little) : type === MI.UINT16 ? (i) => v.getUint16(2 * i, little)
          : type === MI.INT32 ? (i) => v.getInt32(4 * i, little) : (i) => v.getUint32(4 * i, little);
  if (shift === 0) for (let i = 0, j = at; i < count; i++, j += stride) out[j] = read(i) * scale;
  else for (let i = 0, j = at; i < count; i++, j += stride) out[j] = (read(i) + shift) * scale;
}

/** Whether a stored type holds numbers the decoder reads. */
export const isNumericType = (type: number) => ([MI.INT8, MI.UINT8, MI.INT16, MI.UINT16, MI.INT32, MI.UINT32, MI.SINGLE, MI.DOUBLE, MI.INT64, MI.UINT64] as number[]).includes(type);
