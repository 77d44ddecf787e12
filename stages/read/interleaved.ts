// Interleaved binary frames (WAV data chunks, raw acquisition files) → per-channel chunks.
import { endianness } from 'node:os';
import { RecordingError } from './recording.js';
import { THREAD_READING_BUFFERS, type ReadingBuffers } from './reading-buffers.js';
import type { ByteReader } from './source.js';

export type SampleType = 'uint8' | 'int16' | 'int24' | 'int32' | 'float32' | 'float64';
export type ByteOrder = 'little' | 'big';

export const BYTES: Record<SampleType, number> = { uint8: 1, int16: 2, int24: 3, int32: 4, float32: 4, float64: 8 };

/** Decodes the sample at a byte offset to a number (normalised to ±1 for integer codes). */
export type SampleDecoder = (v: DataView, at: number) => number;

export interface InterleavedLayout {
  sampleType: SampleType;
  byteOrder: ByteOrder;
  channels: number;
  /** Byte offset of the first frame. */
  offset: number;
  frames: number;
  /** An encoding the sample types do not cover (PCM of other widths, G.711): its width in bytes and its decoder. */
  custom?: { width: number; decode: SampleDecoder };
}

/** Full-scale divisor that maps an integer code to ±1 (offset binary for 8-bit unsigned). */
function decoder(type: SampleType, little: boolean): SampleDecoder {
  switch (type) {
    case 'uint8': return (v, at) => (v.getUint8(at) - 128) / 128;
    case 'int16': return (v, at) => v.getInt16(at, little) / 32768;
    case 'int24': return little
      ? (v, at) => ((v.getUint8(at) | (v.getUint8(at + 1) << 8) | (v.getInt8(at + 2) << 16))) / 8388608
      : (v, at) => ((v.getUint8(at + 2) | (v.getUint8(at + 1) << 8) | (v.getInt8(at) << 16))) / 8388608;
    case 'int32': return (v, at) => v.getInt32(at, little) / 2147483648;
    case 'float32': return (v, at) => v.getFloat32(at, little);
    case 'float64': return (v, at) => v.getFloat64(at, little);
  }
}

/**
 * Streams the frames of an open file in chunks of at most chunkFrames. Its buffers come from the thread's reading
 * buffers and go back once the file is read; what it yields is valid until the next chunk is asked for.
 */
export async function* readInterleaved(file: ByteReader, layout: InterleavedLayout, chunkFrames: number, where: string, buffers: ReadingBuffers = THREAD_READING_BUFFERS): AsyncGenerator<Float64Array[]> {
  const width = layout.custom?.width ?? BYTES[layout.sampleType];
  const frameBytes = width * layout.channels;
  // A short file needs buffers for its own frames only.
  const frames = Math.max(1, Math.min(chunkFrames, layout.frames));
  const buffer = buffers.takeBytes(frames * frameBytes);
  const out = buffers.takeSamples(layout.channels, frames);
  try {
    yield* decodeChunks(file, layout, frames, where, buffer, out);
  } finally {
    buffers.give(buffer, out);
  }
}

/** Reads chunks of at most `frames` frames into `buffer` and decodes them into `out`, one array a channel. */
async function* decodeChunks(file: ByteReader, layout: InterleavedLayout, chunkFrames: number, where: string, buffer: Buffer, out: Float64Array[]): AsyncGenerator<Float64Array[]> {
  const width = layout.custom?.width ?? BYTES[layout.sampleType];
  const frameBytes = width * layout.channels;
  const view = new DataView(buffer.buffer, buffer.byteOffset, buffer.byteLength);
  const decode = layout.custom?.decode ?? decoder(layout.sampleType, layout.byteOrder === 'little');
  const nativeLittle = !layout.custom && layout.byteOrder === 'little' && endianness() === 'LE';
  const little16 = nativeLittle && layout.sampleType === 'int16' && buffer.byteOffset % 2 === 0;
  const little24 = !layout.custom && layout.byteOrder === 'little' && layout.sampleType === 'int24';
  let done = 0;
  while (done < layout.frames) {
    const want = Math.min(chunkFrames, layout.frames - done);
    const position = layout.offset + done * frameBytes;
    let got = 0;
    while (got < want * frameBytes) {
      const { bytesRead } = await file.read(buffer, got, want * frameBytes - got, position + got);
      if (bytesRead === 0) {
        throw new RecordingError(`${where}: the file ends at byte ${position + got}, inside frame ${done + Math.floor(got / frameBytes)} of ${layout.frames}; it was cut short (interrupted copy or capture): recapture or re-export it`);
      }
      got += bytesRead;
    }
    if (little16) decodeLittle16(new Int16Array(buffer.buffer, buffer.byteOffset, want * layout.channels), out, want, layout.channels);
    else if (little24) decodeLittle24(buffer, out, want, frameBytes);
    else decodeEach(view, decode, out, want, width, frameBytes);
    done += want;
    yield want === chunkFrames ? out : out.map((ch) => ch.subarray(0, want));
  }
}

// The per-sample loops, each its own function: V8 optimises each once, for every file, where inside the generator a
// path first taken late (another width, a short last chunk) sent the whole generator back to the interpreter.

/** 16-bit little-endian on a little-endian machine: the codes read as an Int16Array, the same values as getInt16 / 32768; four channels a pass where there are four, so each frame's codes are read together. */
function decodeLittle16(codes: Int16Array, out: Float64Array[], want: number, step: number): void {
  let c = 0;
  for (; c + 4 <= step; c += 4) {
    const a = out[c], b = out[c + 1], d = out[c + 2], e = out[c + 3];
    for (let i = 0, at = c; i < want; i++, at += step) { a[i] = codes[at] / 32768; b[i] = codes[at + 1] / 32768; d[i] = codes[at + 2] / 32768; e[i] = codes[at + 3] / 32768; }
  }
  for (; c < step; c++) {
    const ch = out[c];
    for (let i = 0, at = c; i < want; i++, at += step) ch[i] = codes[at] / 32768;
  }
}

/** 24-bit little-endian: the three bytes shifted to the top of an int32 and back, the sign carried. */
function decodeLittle24(buffer: Uint8Array, out: Float64Array[], want: number, frameBytes: number): void {
  for (let c = 0; c < out.length; c++) {
    const ch = out[c];
    for (let i = 0, at = c * 3; i < want; i++, at += frameBytes) ch[i] = (((buffer[at + 2] << 24) | (buffer[at + 1] << 16) | (buffer[at] << 8)) >> 8) / 8388608;
  }
}

/** Any other encoding, a sample at a time through its decoder. */
function decodeEach(view: DataView, decode: SampleDecoder, out: Float64Array[], want: number, width: number, frameBytes: number): void {
  for (let c = 0; c < out.length; c++) {
    const ch = out[c];
    for (let i = 0, at = c * width; i < want; i++, at += frameBytes) ch[i] = decode(view, at);
  }
}
