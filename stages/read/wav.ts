// WAV/RIFF reader: RIFF (little-endian), RIFX (big-endian), RF64 and BW64 (64-bit sizes in a ds64 chunk: EBU Tech 3306,
// ITU-R BS.2088); PCM of 1–64 bits, IEEE float 32/64, G.711 µ-law and A-law, WAVE_FORMAT_EXTENSIBLE; Broadcast Wave start time.
import { readInterleaved } from './interleaved.js';
import { boundedChunkFrames, DEFAULT_CHUNK_FRAMES, RecordingError, type Recording } from './recording.js';
import { openSource, type ByteReader } from './source.js';
import { parseFmt, wavEncoding, type FmtChunk, type WavEncoding } from './wav-encoding.js';
import { walkTail } from './wav-tail.js';

// Broadcast Wave (EBU Tech 3285): OriginationDate at byte 320 ("yyyy-mm-dd", any separator), OriginationTime at 330 ("hh:mm:ss").
// A date that is no day of the calendar (recorders write 0000-00-00 when their clock was never set) gives no start.
export function bextStartTime(b: Buffer): Date | null {
  if (b.length < 338) return null;
  const date = b.toString('latin1', 320, 330).match(/^(\d{4})\D(\d{2})\D(\d{2})$/);
  const time = b.toString('latin1', 330, 338).match(/^(\d{2})\D(\d{2})\D(\d{2})$/);
  if (!date) return null;
  const [y, mo, d] = [date[1], date[2], date[3]].map(Number);
  const [h, m, s] = time ? [time[1], time[2], time[3]].map(Number) : [0, 0, 0];
  if (y < 1 || h > 23 || m > 59 || s > 59) return null;
  const t = Date.UTC(y, mo - 1, d, h, m, s);
  // Date.UTC rolls 30 February over to 2 March and month 13 into the next year: such a date is refused, not moved.
  const back = new Date(t);
  return Number.isFinite(t) && back.getUTCFullYear() === y && back.getUTCMonth() === mo - 1 && back.getUTCDate() === d ? back : null;
}

/** A note for a bext chunk whose origination date is written but names no instant; null when it gives a start or is left blank. */
export function bextDateNote(b: Buffer): string | null {
  if (b.length < 338 || bextStartTime(b)) return null;
  const written = b.toString('latin1', 320, 338).replace(/[\0 ]+$/, '');
  if (!written) return null;
  return `the bext chunk's origination date and time "${printable(written)}" name no instant (EBU Tech 3285 writes yyyy-mm-dd hh:mm:ss; 0000-00-00 is a recorder whose clock was never set), so the start is unknown and --since goes by the file's modification time: set the recorder's clock`;
}

export type RiffKind = 'RIFF' | 'RIFX' | 'RF64' | 'BW64';

export interface WavHeader {
  kind: RiffKind;
  little: boolean;
  fmt: FmtChunk;
  encoding: WavEncoding;
  startTime: Date | null;
  /** Byte offset and declared size of the data chunk's samples. */
  data: { offset: number; size: number };
  frames: number;
  frameBytes: number;
  notes: string[];
}

const printable = (s: string) => s.replace(/[^\x20-\x7e]/g, '?');

// RF64/BW64 ds64 chunk (EBU Tech 3306 §3; ITU-R BS.2088 §4): 64-bit RIFF size, data size and sample count, then a table
// of {chunk id, 64-bit size} for other chunks whose 32-bit size field holds 0xFFFFFFFF.
function parseDs64(b: Buffer, at: number): { dataSize: number; table: Map<string, number> } {
  if (b.length < 28) throw new RecordingError(`byte ${at}: ds64 chunk is ${b.length} bytes, shorter than the 28 it needs; the header is damaged`);
  const u64 = (o: number) => {
    const v = b.readUInt32LE(o) + b.readUInt32LE(o + 4) * 2 ** 32;
    // Sizes past the file are cut files, reported where the data is checked; past 2^53 bytes no file is.
    if (!Number.isSafeInteger(v)) throw new RecordingError(`byte ${at + o}: ds64 gives a size of ${v} bytes, more than any file holds; the header is damaged`);
    return v;
  };
  const dataSize = u64(8);
  const entries = Math.min(b.readUInt32LE(24), Math.floor((b.length - 28) / 12));
  const table = new Map<string, number>();
  for (let i = 0; i < entries; i++) table.set(b.toString('latin1', 28 + 12 * i, 32 + 12 * i), u64(32 + 12 * i));
  return { dataSize, table };
}

/**
 * Whether a data size that reaches past the file is a writer's stand-in rather than the size of samples cut short: near
 * 2^31 or beyond (sox writing to a pipe leaves the most whole frames up to 0x7ffff000 bytes), with under half of it in the
 * file (our threshold; a capture of over 2 GiB cut before its middle looks the same, so the message names that case too).
 */
export function streamedSize(declared: number, present: number, { near = 2 ** 31 - 2 ** 20, share = 0.5 } = {}): boolean {
  return declared >= near && present < share * declared;
}

/** Reads and checks every header field; the samples stay on disk. */
export async function readWavHeader(file: ByteReader, size: number): Promise<WavHeader> {
  // One read of the first 64 KiB holds the header chunks of nearly every file; later chunk headers are read where they lie.
  const head = Buffer.alloc(Math.min(size, 65536));
  await file.read(head, 0, head.length, 0);
  const bytesAt = async (at: number, length: number): Promise<Buffer> => {
    if (at + length <= head.length) return head.subarray(at, at + length);
    const b = Buffer.alloc(Math.max(0, Math.min(length, size - at)));
    await file.read(b, 0, b.length, at);
    return b;
  };
  const kind = head.toString('latin1', 0, 4) as RiffKind;
  if (!['RIFF', 'RIFX', 'RF64', 'BW64'].includes(kind) || head.length < 12 || head.toString('latin1', 8, 12) !== 'WAVE') {
    throw new RecordingError(`byte 0: not a RIFF/WAVE file (starts with "${printable(head.toString('latin1', 0, 4))}"); check the group's format or the file`);
  }
  const little = kind !== 'RIFX';
  const sixtyFour = kind === 'RF64' || kind === 'BW64';
  let ds64: ReturnType<typeof parseDs64> | null = null;
  let fmt: FmtChunk | null = null;
  let fmtAt = 0;
  let startTime: Date | null = null;
  let bext: Buffer | null = null;
  let data: { offset: number; size: number } | null = null;
  let pos = 12;
  while (pos + 8 <= size) {
    const ch = await bytesAt(pos, 8);
    const id = ch.toString('latin1', 0, 4);
    let len = little ? ch.readUInt32LE(4) : ch.readUInt32BE(4);
    const body = pos + 8;
    if (sixtyFour && len === 0xffffffff && ds64) len = id === 'data' ? ds64.dataSize : (ds64.table.get(id) ?? len);
    if (id === 'ds64') {
      if (!sixtyFour) throw new RecordingError(`byte ${pos}: a ds64 chunk in a ${kind} file; the header is damaged`);
      ds64 = parseDs64(await bytesAt(body, Math.min(len, 28 + 12 * 1024)), body);
    } else if (sixtyFour && !ds64) {
      throw new RecordingError(`byte ${pos}: ${kind} file whose first chunk is "${printable(id)}", not ds64 (EBU Tech 3306); the header is damaged`);
    } else if (id === 'fmt ') {
      fmt = parseFmt(await bytesAt(body, Math.min(len, 4096)), little, `byte ${body}`);
      fmtAt = body;
    } else if (id === 'bext') {
      bext = await bytesAt(body, Math.min(len, 4096));
      startTime = bextStartTime(bext);
    } else if (id === 'data') {
      data = { offset: body, size: len };
      if (fmt) break; // everything needed is known; later chunks (LIST, cue…) do not matter
    }
    pos = body + len + (len % 2); // chunks are padded to an even length
  }
  if (sixtyFour && !ds64) throw new RecordingError(`byte 12: ${kind} file without its ds64 chunk (EBU Tech 3306); the header is damaged`);
  if (!fmt) throw new RecordingError(`no fmt chunk before byte ${size}; the header is missing or damaged`);
  if (!data) throw new RecordingError(`no data chunk before byte ${size}; the file holds no samples (an aborted capture?)`);
  const where = `fmt chunk (byte ${fmtAt})`;
  const encoding = wavEncoding(fmt, little, where);
  if (fmt.sampleRate === 0) throw new RecordingError(`${where}: sample rate is 0; the header is damaged`);
  const frameBytes = fmt.blockAlign;
  const present = size - data.offset;
  if (!sixtyFour && (data.size === 0xffffffff || (data.size === 0 && present > 0))) {
    throw new RecordingError(`byte ${data.offset - 4}: data chunk size was never written (${data.size}); the capture was not closed properly: re-export it`);
  }
  if (streamedSize(data.size, present)) {
    throw new RecordingError(`byte ${data.offset - 4}: the data chunk's size (${data.size} bytes) is a stand-in, not the samples' size: the file holds ${present} bytes of samples and nothing after them. It was written as a stream (to a pipe) and its sizes were never filled in; write it again with its sizes (sox in.wav out.wav) and reduce the copy. Only if the capture really was over 2 GiB was the file cut short: then copy it again`);
  }
  if (data.size > present) {
    throw new RecordingError(`byte ${size}: the file ends ${data.size - present} bytes early: the data chunk declares ${Math.floor(data.size / frameBytes)} frames but only ${Math.floor(present / frameBytes)} are present; the file was cut short (interrupted copy or capture): recapture or copy it again`);
  }
  const notes = data.size % frameBytes ? [`data chunk ends with ${data.size % frameBytes} bytes of a partial frame, ignored`] : [];
  const end = data.offset + data.size + (data.size % 2);
  const tail = await walkTail(bytesAt, end, size, little);
  if (!startTime && !bext && tail.bext) { bext = await bytesAt(tail.bext.at, Math.min(tail.bext.size, 4096)); startTime = bextStartTime(bext); }
  const dateNote = bext && bextDateNote(bext);
  if (dateNote) notes.push(dateNote);
  if (tail.cut) notes.push(`the "${tail.cut.id}" chunk after the data (byte ${tail.cut.at}) declares ${tail.cut.size} bytes, more than the ${size - tail.cut.at - 8} left in the file: it is cut short or damaged and was ignored${tail.cut.id === 'bext' && !startTime ? ', so the start time is unknown' : ''}; the samples before it are whole`);
  else if (tail.unaccounted > 0) notes.push(`${tail.unaccounted} bytes after the data chunk's end (byte ${end}) form no chunk and were ignored; if the recorder wrote more samples than the data chunk's size says, the header is wrong: check the recorder or re-export the file`);
  return { kind, little, fmt, encoding, startTime, data, frames: Math.floor(data.size / frameBytes), frameBytes, notes };
}

export async function openWav(path: string, { chunkFrames = DEFAULT_CHUNK_FRAMES } = {}): Promise<Recording> {
  const file = await openSource(path);
  try {
    const h = await readWavHeader(file, file.size);
    const e = h.encoding;
    const frames = boundedChunkFrames(chunkFrames, h.fmt.channels, h.frameBytes);
    return {
      format: 'wav', channelCount: h.fmt.channels, sampleRate: h.fmt.sampleRate, frames: h.frames,
      encoding: h.kind === 'RIFF' ? e.encoding : `${e.encoding} (${h.kind})`, bits: e.bits, normalised: e.normalised,
      startTime: h.startTime, channelNames: null, notes: h.notes,
      chunks: () => readInterleaved(file, { sampleType: e.sampleType, custom: e.custom, byteOrder: h.little ? 'little' : 'big', channels: h.fmt.channels, offset: h.data.offset, frames: h.frames }, frames, 'data chunk'),
      close: () => file.close(),
    };
  } catch (e) {
    await file.close();
    throw e;
  }
}
