// WAV/RIFF reader: PCM 8/16/24/32-bit, IEEE float 32/64, WAVE_FORMAT_EXTENSIBLE, Broadcast Wave `bext` start time.
import { open } from 'node:fs/promises';
import { BYTES, readInterleaved, type SampleType } from './interleaved.js';
import { DEFAULT_CHUNK_FRAMES, RecordingError, type Recording } from './recording.js';

// Format codes from the RIFF/WAVE specification and its registered extensions, named so a refusal says what the file is.
const FORMAT_NAMES: Record<number, string> = {
  0x0001: 'PCM', 0x0002: 'Microsoft ADPCM', 0x0003: 'IEEE float', 0x0006: 'A-law', 0x0007: 'µ-law',
  0x0011: 'IMA ADPCM', 0x0031: 'GSM 6.10', 0x0050: 'MPEG', 0x0055: 'MPEG Layer III', 0x00ff: 'AAC',
  0x0161: 'WMA', 0xf1ac: 'FLAC', 0xfffe: 'WAVE_FORMAT_EXTENSIBLE',
};
const formatName = (code: number) => `0x${code.toString(16).padStart(4, '0')} (${FORMAT_NAMES[code] ?? 'unregistered'})`;

interface FmtChunk { code: number; channels: number; sampleRate: number; blockAlign: number; bits: number; validBits: number }

function parseFmt(b: Buffer, where: string): FmtChunk {
  if (b.length < 16) throw new RecordingError(`${where}: fmt chunk is ${b.length} bytes, shorter than the 16 the format requires; the header is damaged`);
  let code = b.readUInt16LE(0);
  const bits = b.readUInt16LE(14);
  let validBits = bits;
  if (code === 0xfffe) {
    if (b.length < 40) throw new RecordingError(`${where}: WAVE_FORMAT_EXTENSIBLE fmt chunk is ${b.length} bytes, expected 40; the header is damaged`);
    validBits = b.readUInt16LE(18) || bits;
    code = b.readUInt16LE(24); // the sub-format GUID starts with the plain format code
  }
  return { code, channels: b.readUInt16LE(2), sampleRate: b.readUInt32LE(4), blockAlign: b.readUInt16LE(12), bits, validBits };
}

function sampleTypeOf(f: FmtChunk, where: string): SampleType {
  if (f.code === 1) {
    const t = ({ 8: 'uint8', 16: 'int16', 24: 'int24', 32: 'int32' } as const)[f.bits];
    if (t) return t;
    throw new RecordingError(`${where}: PCM with ${f.bits}-bit containers is not supported (8, 16, 24 or 32 bits are); convert the file to one of those`);
  }
  if (f.code === 3) {
    if (f.bits === 32) return 'float32';
    if (f.bits === 64) return 'float64';
    throw new RecordingError(`${where}: IEEE float with ${f.bits} bits is not supported (32 or 64 are)`);
  }
  throw new RecordingError(`${where}: WAV format code ${formatName(f.code)} is not supported; quern reads PCM and IEEE float only and will not guess at compressed data: convert the file to PCM or float WAV`);
}

// Broadcast Wave (EBU Tech 3285): OriginationDate at byte 320 ("yyyy-mm-dd", any separator), OriginationTime at 330 ("hh:mm:ss").
export function bextStartTime(b: Buffer): Date | null {
  if (b.length < 338) return null;
  const date = b.toString('latin1', 320, 330).match(/^(\d{4})\D(\d{2})\D(\d{2})$/);
  const time = b.toString('latin1', 330, 338).match(/^(\d{2})\D(\d{2})\D(\d{2})$/);
  if (!date) return null;
  const [h, m, s] = time ? [time[1], time[2], time[3]].map(Number) : [0, 0, 0];
  const t = Date.UTC(Number(date[1]), Number(date[2]) - 1, Number(date[3]), h, m, s);
  return Number.isFinite(t) ? new Date(t) : null;
}

export async function openWav(path: string, { chunkFrames = DEFAULT_CHUNK_FRAMES } = {}): Promise<Recording> {
  const file = await open(path, 'r');
  try {
    const size = (await file.stat()).size;
    const head = Buffer.alloc(12);
    await file.read(head, 0, Math.min(12, size), 0);
    const riff = head.toString('latin1', 0, 4);
    if (riff === 'RF64' || riff === 'BW64') throw new RecordingError(`byte 0: ${riff} (64-bit RIFF) files are not supported; split the capture into WAV files under 4 GiB`);
    if (riff !== 'RIFF' || head.toString('latin1', 8, 12) !== 'WAVE') throw new RecordingError(`byte 0: not a RIFF/WAVE file (starts with "${head.toString('latin1', 0, 4).replace(/[^\x20-\x7e]/g, '?')}"); check the group's format or the file`);
    let fmt: FmtChunk | null = null;
    let start: Date | null = null;
    let data: { offset: number; size: number } | null = null;
    // One read of the first 64 KiB holds the header chunks of nearly every file; later chunk headers are read where they lie.
    const head64 = Buffer.alloc(Math.min(size, 65536));
    await file.read(head64, 0, head64.length, 0);
    const bytesAt = async (at: number, length: number): Promise<Buffer> => {
      if (at + length <= head64.length) return head64.subarray(at, at + length);
      const b = Buffer.alloc(Math.max(0, Math.min(length, size - at)));
      await file.read(b, 0, b.length, at);
      return b;
    };
    let pos = 12;
    while (pos + 8 <= size) {
      const ch = await bytesAt(pos, 8);
      const id = ch.toString('latin1', 0, 4);
      const len = ch.readUInt32LE(4);
      const body = pos + 8;
      if (id === 'fmt ' || id === 'bext') {
        const b = await bytesAt(body, Math.min(len, 4096));
        if (id === 'fmt ') fmt = parseFmt(b, `byte ${body}`);
        else start = bextStartTime(b);
      } else if (id === 'data') {
        data = { offset: body, size: len };
        if (fmt) break; // everything needed is known; later chunks (LIST, cue…) do not matter
      }
      pos = body + len + (len & 1); // chunks are padded to an even length
    }
    if (!fmt) throw new RecordingError(`no fmt chunk before byte ${size}; the header is missing or damaged`);
    if (!data) throw new RecordingError(`no data chunk before byte ${size}; the file holds no samples (an aborted capture?)`);
    const type = sampleTypeOf(fmt, 'fmt chunk');
    const frameBytes = BYTES[type] * fmt.channels;
    if (fmt.channels === 0 || fmt.blockAlign !== frameBytes) throw new RecordingError(`fmt chunk: block align ${fmt.blockAlign} does not fit ${fmt.channels} channels of ${fmt.bits} bits; the header is damaged`);
    if (fmt.sampleRate === 0) throw new RecordingError('fmt chunk: sample rate is 0; the header is damaged');
    const present = size - data.offset;
    if (data.size === 0xffffffff || (data.size === 0 && present > 0)) throw new RecordingError(`byte ${data.offset - 4}: data chunk size was never written (${data.size}); the capture was not closed properly: re-export it`);
    if (data.size > present) {
      throw new RecordingError(`byte ${size}: the file ends ${data.size - present} bytes early: the data chunk declares ${Math.floor(data.size / frameBytes)} frames but only ${Math.floor(present / frameBytes)} are present; the file was cut short (interrupted copy or capture): recapture or copy it again`);
    }
    const frames = Math.floor(data.size / frameBytes);
    const notes = data.size % frameBytes ? [`data chunk ends with ${data.size % frameBytes} bytes of a partial frame, ignored`] : [];
    const integer = type !== 'float32' && type !== 'float64';
    return {
      format: 'wav', channelCount: fmt.channels, sampleRate: fmt.sampleRate, frames,
      encoding: integer ? `pcm${fmt.bits}` : type, bits: integer ? fmt.validBits : null, normalised: integer,
      startTime: start, channelNames: null, notes,
      chunks: () => readInterleaved(file, { sampleType: type, byteOrder: 'little', channels: fmt!.channels, offset: data!.offset, frames }, chunkFrames, 'data chunk'),
      close: () => file.close(),
    };
  } catch (e) {
    await file.close();
    throw e;
  }
}
