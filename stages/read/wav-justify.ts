// Where a plain PCM fmt chunk's samples sit in containers wider than their bits. The WAV format's PCM rules put them in the
// container's top bits with the low bits zero (Microsoft/IBM, Multimedia Programming Interface and Data Specifications 1.0,
// 1991, "Data Format of the Samples"; from memory); some writers put them in the low bits, sign-extended, and leave the
// header the same, so only the samples can tell.
import { signedBytes } from './pcm.js';

export type Justification = 'left' | 'right' | 'unclear';

/** Samples looked at: enough to see data in the low bits of any signal that is not silence, bounded to 64 K (our choice). */
export const JUSTIFY_LOOK_SAMPLES = 65_536;

/**
 * How `validBits` sit in `containerBytes` (2–6) over the samples in `bytes`: 'left' when every sample's low bits are zero
 * (silence too), 'right' when every container's signed value lies within the valid bits' range (its top bits the sign
 * extension of the top valid bit), 'unclear' when neither holds.
 */
export function justification(bytes: Uint8Array, containerBytes: number, validBits: number, little: boolean, { most = JUSTIFY_LOOK_SAMPLES } = {}): Justification {
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const read = containerBytes === 2 ? (at: number) => view.getInt16(at, little)
    : containerBytes === 4 ? (at: number) => view.getInt32(at, little)
    : ((r) => (at: number) => r(view, at))(signedBytes(containerBytes, little));
  const step = 2 ** (containerBytes * 8 - validBits);
  const top = 2 ** (validBits - 1);
  const n = Math.min(most, Math.floor(bytes.byteLength / containerBytes));
  let left = true, right = true;
  for (let i = 0, at = 0; i < n && (left || right); i++, at += containerBytes) {
    const v = read(at);
    if (v % step !== 0) left = false;
    if (v < -top || v >= top) right = false;
  }
  return left ? 'left' : right ? 'right' : 'unclear';
}
