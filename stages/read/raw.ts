// Raw interleaved binary: the layout (sample type, byte order, channels, header bytes) is declared, not read.
import { BYTES, readInterleaved, type ByteOrder, type SampleType } from './interleaved.js';
import { boundedChunkFrames, checkChannelCount, DEFAULT_CHUNK_FRAMES, RecordingError, type Recording } from './recording.js';
import { openSource } from './source.js';

export interface RawLayout { sample_type: SampleType; byte_order: ByteOrder; channels: number; header_bytes: number }

export async function openRaw(path: string, layout: RawLayout, sampleRate: number, { chunkFrames = DEFAULT_CHUNK_FRAMES } = {}): Promise<Recording> {
  const file = await openSource(path);
  try {
    const size = file.size;
    checkChannelCount(layout.channels, 'layout');
    const frameBytes = BYTES[layout.sample_type] * layout.channels;
    if (size < layout.header_bytes) throw new RecordingError(`byte ${size}: the file is shorter than its declared ${layout.header_bytes}-byte header; check layout.header_bytes or the file`);
    const payload = size - layout.header_bytes;
    const frames = Math.floor(payload / frameBytes);
    const notes = payload % frameBytes ? [`the last ${payload % frameBytes} bytes do not make a whole frame of ${frameBytes} bytes and were ignored; if that is unexpected, check layout.channels, layout.sample_type and layout.header_bytes`] : [];
    const integer = layout.sample_type !== 'float32' && layout.sample_type !== 'float64';
    return {
      format: 'raw', channelCount: layout.channels, sampleRate, frames,
      encoding: layout.sample_type, bits: integer ? BYTES[layout.sample_type] * 8 : null, normalised: integer,
      startTime: null, channelNames: null, notes,
      chunks: () => readInterleaved(file, { sampleType: layout.sample_type, byteOrder: layout.byte_order, channels: layout.channels, offset: layout.header_bytes, frames }, boundedChunkFrames(chunkFrames, layout.channels, frameBytes), 'samples'),
      close: () => file.close(),
    };
  } catch (e) {
    await file.close();
    throw e;
  }
}
