// Decodes one FLAC frame (RFC 9639 §9) to integer samples per channel, checking its header CRC-8 and frame CRC-16.
import { BitReader, OutOfBits } from './bits.js';
import { crc16, crc8 } from './crc.js';

/** What the frame header may leave to STREAMINFO. */
export interface StreamParams { sampleRate: number; bitsPerSample: number; channels: number; maxBlockSize: number }

/** A frame that cannot be decoded; `cut` when it ran past the bytes available. */
export class FrameError extends Error {
  constructor(message: string, readonly cut = false) { super(message); }
}

export interface DecodedFrame { blockSize: number; sampleRate: number; bitsPerSample: number; channels: number; bytes: number }

const SAMPLE_RATES = [0, 88200, 176400, 192000, 8000, 16000, 22050, 24000, 32000, 44100, 48000, 96000];
const SAMPLE_SIZES = [0, 8, 12, -1, 16, 20, 24, 32];

/** Largest frame a stream of these parameters can have (verbatim subframes at 33 bits plus headers), for buffer sizing. */
export const maxFrameBytes = (channels: number, maxBlockSize: number) => 18 + channels * (Math.ceil((33 * maxBlockSize + 40) / 8) + 1) + 2;

/**
 * Decodes the frame starting at `at` into `out` (one array per channel, at least maxBlockSize long), as integers.
 * Throws FrameError saying what is wrong.
 */
export function decodeFrame(b: Uint8Array, at: number, end: number, params: StreamParams, out: Float64Array[]): DecodedFrame {
  try {
    return decode(b, at, end, params, out);
  } catch (e) {
    if (e instanceof OutOfBits) throw new FrameError('the frame runs past the end of the data', true);
    throw e;
  }
}

function decode(b: Uint8Array, at: number, end: number, params: StreamParams, out: Float64Array[]): DecodedFrame {
  const r = new BitReader(b, at, end);
  if (r.read(15) !== 0x7ffc) throw new FrameError('no frame sync code (0xFFF8/0xFFF9) here');
  r.read(1); // blocking strategy: fixed or variable; the coded number is not needed to decode
  const bsCode = r.read(4), srCode = r.read(4), chCode = r.read(4), ssCode = r.read(3);
  if (r.read(1) !== 0) throw new FrameError('reserved header bit set');
  // The coded frame or sample number: a UTF-8-like run of 1–7 bytes.
  const lead = r.read(8);
  const extra = lead < 0x80 ? 0 : lead >= 0xc0 && lead < 0xe0 ? 1 : lead >= 0xe0 && lead < 0xf0 ? 2 : lead >= 0xf0 && lead < 0xf8 ? 3
    : lead >= 0xf8 && lead < 0xfc ? 4 : lead >= 0xfc && lead < 0xfe ? 5 : lead === 0xfe ? 6 : -1;
  if (extra < 0) throw new FrameError('malformed coded frame number');
  for (let i = 0; i < extra; i++) if ((r.read(8) & 0xc0) !== 0x80) throw new FrameError('malformed coded frame number');
  let blockSize: number;
  if (bsCode === 0) throw new FrameError('reserved block size code 0');
  else if (bsCode === 1) blockSize = 192;
  else if (bsCode <= 5) blockSize = 576 << (bsCode - 2);
  else if (bsCode === 6) blockSize = r.read(8) + 1;
  else if (bsCode === 7) blockSize = r.read(16) + 1;
  else blockSize = 256 << (bsCode - 8);
  let sampleRate: number;
  if (srCode === 0) sampleRate = params.sampleRate;
  else if (srCode <= 11) sampleRate = SAMPLE_RATES[srCode];
  else if (srCode === 12) sampleRate = r.read(8) * 1000;
  else if (srCode === 13) sampleRate = r.read(16);
  else if (srCode === 14) sampleRate = r.read(16) * 10;
  else throw new FrameError('invalid sample rate code 15');
  const bps = ssCode === 0 ? params.bitsPerSample : SAMPLE_SIZES[ssCode];
  if (bps < 0) throw new FrameError('reserved sample size code 3');
  if (chCode > 10) throw new FrameError(`reserved channel assignment ${chCode}`);
  const channels = chCode < 8 ? chCode + 1 : 2;
  const headerEnd = r.bytePos;
  if (r.read(8) !== crc8(b, at, headerEnd)) throw new FrameError('frame header CRC-8 mismatch');
  if (channels !== params.channels || bps !== params.bitsPerSample || sampleRate !== params.sampleRate) {
    throw new FrameError(`the frame has ${channels} channels, ${bps} bits and ${sampleRate} Hz where STREAMINFO says ${params.channels}, ${params.bitsPerSample} and ${params.sampleRate}`);
  }
  if (blockSize > params.maxBlockSize) throw new FrameError(`block of ${blockSize} samples, more than STREAMINFO's largest (${params.maxBlockSize})`);
  for (let c = 0; c < channels; c++) {
    // The side channel of a stereo decorrelation carries one bit more.
    const side = (chCode === 8 && c === 1) || (chCode === 9 && c === 0) || (chCode === 10 && c === 1);
    subframe(r, out[c], blockSize, bps + (side ? 1 : 0));
  }
  r.align();
  const frameEnd = r.bytePos;
  if (r.read(16) !== crc16(b, at, frameEnd)) throw new FrameError('frame CRC-16 mismatch');
  decorrelate(chCode, out[0], out[1], blockSize);
  return { blockSize, sampleRate, bitsPerSample: bps, channels, bytes: frameEnd + 2 - at };
}

// Stereo decorrelation (RFC 9639 §4.2): left/side, side/right, mid/side.
function decorrelate(chCode: number, a: Float64Array, s: Float64Array, n: number): void {
  if (chCode === 8) for (let i = 0; i < n; i++) s[i] = a[i] - s[i];
  else if (chCode === 9) for (let i = 0; i < n; i++) a[i] += s[i];
  else if (chCode === 10) {
    for (let i = 0; i < n; i++) {
      const side = s[i], mid = a[i] * 2 + (side % 2 !== 0 ? 1 : 0);
      a[i] = Math.floor((mid + side) / 2);
      s[i] = Math.floor((mid - side) / 2);
    }
  }
}

// Subframe (RFC 9639 §9.2): constant, verbatim, fixed predictor (order 0–4) or linear predictor (order 1–32).
function subframe(r: BitReader, x: Float64Array, n: number, bps: number): void {
  if (r.read(1) !== 0) throw new FrameError('subframe padding bit set');
  const type = r.read(6);
  let wasted = 0;
  if (r.read(1)) wasted = r.readUnary() + 1;
  if (wasted >= bps) throw new FrameError(`${wasted} wasted bits of ${bps}`);
  const size = bps - wasted;
  if (type === 0) {
    const v = r.readSigned(size);
    x.fill(v, 0, n);
  } else if (type === 1) {
    for (let i = 0; i < n; i++) x[i] = r.readSigned(size);
  } else if (type >= 8 && type <= 12) {
    const order = type - 8;
    if (order > n) throw new FrameError(`predictor order ${order} exceeds the block of ${n}`);
    for (let i = 0; i < order; i++) x[i] = r.readSigned(size);
    residual(r, x, n, order);
    fixedPredict(x, n, order);
  } else if (type >= 32) {
    const order = type - 31;
    if (order > n) throw new FrameError(`predictor order ${order} exceeds the block of ${n}`);
    for (let i = 0; i < order; i++) x[i] = r.readSigned(size);
    const precision = r.read(4) + 1;
    if (precision === 16) throw new FrameError('invalid coefficient precision');
    const shift = r.readSigned(5);
    if (shift < 0) throw new FrameError('negative predictor shift');
    const coefs = new Float64Array(order);
    for (let i = 0; i < order; i++) coefs[i] = r.readSigned(precision);
    residual(r, x, n, order);
    lpcPredict(x, n, coefs, shift);
  } else {
    throw new FrameError(`reserved subframe type ${type}`);
  }
  if (wasted) { const k = 2 ** wasted; for (let i = 0; i < n; i++) x[i] *= k; }
}

// Residual (RFC 9639 §9.2.7): partitioned Rice coding, 4- or 5-bit parameters, with an escape to fixed-width values.
function residual(r: BitReader, x: Float64Array, n: number, order: number): void {
  const method = r.read(2);
  if (method > 1) throw new FrameError(`reserved residual coding method ${method}`);
  const paramBits = method === 0 ? 4 : 5, escape = (1 << paramBits) - 1;
  const partitionOrder = r.read(4);
  const parts = 1 << partitionOrder;
  if (n % parts !== 0 || (n >> partitionOrder) < order) throw new FrameError(`partition order ${partitionOrder} does not fit the block of ${n}`);
  let i = order;
  for (let p = 0; p < parts; p++) {
    const count = (n >> partitionOrder) - (p === 0 ? order : 0);
    const k = r.read(paramBits);
    if (k === escape) {
      const width = r.read(5);
      for (let j = 0; j < count; j++) x[i++] = r.readSigned(width);
    } else {
      const scale = 2 ** k;
      for (let j = 0; j < count; j++) {
        const u = r.readUnary() * scale + r.read(k);
        x[i++] = u % 2 === 0 ? u / 2 : -(u + 1) / 2; // folded to signed: 0, −1, 1, −2, …
      }
    }
  }
}

// Fixed predictors (RFC 9639 §9.2.5): polynomial extrapolations of order 0–4; x holds the residual after the warm-up.
function fixedPredict(x: Float64Array, n: number, order: number): void {
  if (order === 1) for (let i = 1; i < n; i++) x[i] += x[i - 1];
  else if (order === 2) for (let i = 2; i < n; i++) x[i] += 2 * x[i - 1] - x[i - 2];
  else if (order === 3) for (let i = 3; i < n; i++) x[i] += 3 * x[i - 1] - 3 * x[i - 2] + x[i - 3];
  else if (order === 4) for (let i = 4; i < n; i++) x[i] += 4 * x[i - 1] - 6 * x[i - 2] + 4 * x[i - 3] - x[i - 4];
}

// Linear prediction (RFC 9639 §9.2.6): sum of coefficient × past sample, arithmetic right shift, plus the residual.
// Doubles hold every product and sum exactly: coefficients below 2^15, samples below 2^33, at most 32 terms.
function lpcPredict(x: Float64Array, n: number, coefs: Float64Array, shift: number): void {
  const order = coefs.length, k = 2 ** shift;
  for (let i = order; i < n; i++) {
    let sum = 0;
    for (let j = 0; j < order; j++) sum += coefs[j] * x[i - 1 - j];
    x[i] += Math.floor(sum / k);
  }
}
