// WAV/RIFF reader: RIFF (little-endian), RIFX (big-endian), RF64 and BW64 (64-bit sizes in a ds64 chunk: EBU Tech 3306,
// ITU-R BS.2088); PCM of 1–64 bits, IEEE float 32/64, G.711 µ-law and A-law, WAVE_FORMAT_EXTENSIBLE; Broadcast Wave start time.
import { readInterleaved } from './interleaved.js';
import { boundedChunkFrames, DEFAULT_CHUNK_FRAMES, RecordingError, withStart, type Recording } from './recording.js';
import { openSource, type ByteReader } from './source.js';
import { parseFmt, wavEncoding, type FmtChunk, type WavEncoding } from './wav-encoding.js';
import { JUSTIFY_LOOK_SAMPLES, justification } from './wav-justify.js';
import { isCalendarDate } from './iso-time.js';
import { walkTail } from './wav-tail.js';
import { unpaddedChunk, type OddChunk } from './wav-unpadded.js';
import { sizeNeverWritten, STREAMED_SIZE, streamedData, streamedNotLast } from './wav-stream.js';

// Broadcast Wave (EBU Tech 3285 v2, 2011, the bext chunk): OriginationDate at byte 320, 10 characters yyyy-mm-dd, and
// OriginationTime at 330, 8 characters hh:mm:ss; the separators may be any character (the standard recommends - _ : space
// and full stop), the month 1–12, the day one the month has, the hour 0–23, minutes and seconds 0–59 (from memory).
const BEXT_DATE = /^(\d{4})\D(\d{2})\D(\d{2})$/, BEXT_TIME = /^(\d{2})\D(\d{2})\D(\d{2})$/;

/** A field's text: NUL and space padding after it are nothing written. */
const fieldText = (b: Buffer, from: number, to: number) => b.toString('latin1', from, to).replace(/[\0 ]+$/, '').replace(/^[\0 ]+/, '');

/**
 * The start a bext chunk gives, and a note where it gives none though something is written, or where it is known to the
 * day only. A date of zeros is a recorder whose clock was never set; a date that is no day of the calendar, or a time out
 * of range, is no start (Date.UTC would roll 30 February over into March and hour 25 into the next day). A blank time
 * under a valid date starts the day: the recorder's own date beats the file's modification time, which a copy resets.
 */
export function bextOrigin(b: Buffer): { start: Date | null; note: string | null } {
  if (b.length < 338) return { start: null, note: null };
  const dateText = fieldText(b, 320, 330), timeText = fieldText(b, 330, 338);
  const written = b.toString('latin1', 320, 338).replace(/[\0 ]+$/, '');
  const noStart = (why: string) => ({ start: null, note: `the bext chunk's origination date and time "${printable(written)}" name no instant: ${why}, so the start is unknown and the file's modification time stands in for it (for --since and --until, and in the trends' order and baselines): set the recorder's clock` });
  if (!dateText) return timeText ? noStart('the date is blank') : { start: null, note: null };
  const date = dateText.match(BEXT_DATE);
  if (!date) return noStart(`the date "${printable(dateText)}" is not yyyy-mm-dd (EBU Tech 3285)`);
  const [y, mo, d] = [date[1], date[2], date[3]].map(Number);
  if (y === 0 && mo === 0 && d === 0) return noStart('a date of zeros is a recorder whose clock was never set');
  // Date.UTC takes years 0–99 for 1900–1999, so those never match and are refused with the days that do not exist.
  if (!isCalendarDate(y, mo, d)) return noStart(`${printable(dateText)} is no day of the calendar`);
  if (!timeText) {
    return { start: new Date(Date.UTC(y, mo - 1, d)), note: `the bext chunk's origination time is blank under the date ${dateText}: the start is taken as that day's midnight (UTC), right to the day only, as the recorder's date is surer than the file's modification time, which a copy can change` };
  }
  const time = timeText.match(BEXT_TIME);
  if (!time) return noStart(`the time "${printable(timeText)}" is not hh:mm:ss (EBU Tech 3285)`);
  const [h, m, sec] = [time[1], time[2], time[3]].map(Number);
  if (h > 23 || m > 59 || sec > 59) return noStart(`the time ${printable(timeText)} is out of range (hours 00–23, minutes and seconds 00–59)`);
  return { start: new Date(Date.UTC(y, mo - 1, d, h, m, sec)), note: null };
}

/** The start a bext chunk gives, or null. */
export const bextStartTime = (b: Buffer): Date | null => bextOrigin(b).start;

/** A note for a bext chunk whose origination names no instant, or names only a day; null when it gives a start or is left blank. */
export const bextDateNote = (b: Buffer): string | null => bextOrigin(b).note;

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

type BytesAt = (at: number, length: number) => Promise<Buffer>;

/** What the walk from the RIFF header to the data chunk found, and the odd-sized chunks it passed. */
interface HeaderWalk {
  ds64: ReturnType<typeof parseDs64> | null;
  fmt: FmtChunk | null;
  fmtAt: number;
  bext: Buffer | null;
  data: { offset: number; size: number } | null;
  odd: OddChunk[];
}

/** Walks the chunks from byte 12 to the data chunk; `unpaddedAt` is a chunk whose pad byte its writer left out (or -1). */
async function walkHeader(bytesAt: BytesAt, size: number, kind: RiffKind, unpaddedAt: number): Promise<HeaderWalk> {
  const little = kind !== 'RIFX';
  const sixtyFour = kind === 'RF64' || kind === 'BW64';
  const w: HeaderWalk = { ds64: null, fmt: null, fmtAt: 0, bext: null, data: null, odd: [] };
  let pos = 12;
  while (pos + 8 <= size) {
    const ch = await bytesAt(pos, 8);
    const id = ch.toString('latin1', 0, 4);
    let len = little ? ch.readUInt32LE(4) : ch.readUInt32BE(4);
    const body = pos + 8;
    if (sixtyFour && len === 0xffffffff && w.ds64) len = id === 'data' ? w.ds64.dataSize : (w.ds64.table.get(id) ?? len);
    if (id === 'ds64') {
      if (!sixtyFour) throw new RecordingError(`byte ${pos}: a ds64 chunk in a ${kind} file; the header is damaged`);
      w.ds64 = parseDs64(await bytesAt(body, Math.min(len, 28 + 12 * 1024)), body);
    } else if (sixtyFour && !w.ds64) {
      throw new RecordingError(`byte ${pos}: ${kind} file whose first chunk is "${printable(id)}", not ds64 (EBU Tech 3306); the header is damaged`);
    } else if (id === 'fmt ') {
      w.fmt = parseFmt(await bytesAt(body, Math.min(len, 4096)), little, `byte ${body}`);
      w.fmtAt = body;
    } else if (id === 'bext') {
      w.bext = await bytesAt(body, Math.min(len, 4096));
    } else if (id === 'data') {
      w.data = { offset: body, size: len };
      if (w.fmt) break; // everything needed is known; later chunks (LIST, cue…) do not matter
    }
    if (len % 2 && id !== 'data') w.odd.push({ id, at: pos, size: len });
    pos = body + len + (len % 2 && pos !== unpaddedAt ? 1 : 0); // chunks are padded to an even length
  }
  return w;
}

/**
 * A plain PCM fmt chunk (not WAVE_FORMAT_EXTENSIBLE) with containers wider than its bits says nothing of where the bits
 * sit: the first samples decide (wav-justify.ts). Every other fmt chunk reads nothing here.
 */
async function lookAtJustification(bytesAt: BytesAt, fmt: FmtChunk, data: { offset: number; size: number }, size: number, little: boolean, where: string): Promise<{ right: boolean; note: string | null }> {
  const container = fmt.blockAlign / Math.max(1, fmt.channels);
  const none = { right: false, note: null };
  if (fmt.code !== 1 || fmt.extensible || !Number.isInteger(container) || container < 2 || container > 6 || fmt.validBits < 1 || fmt.validBits >= container * 8) return none;
  const length = Math.min(data.size, size - data.offset, JUSTIFY_LOOK_SAMPLES * container);
  const n = Math.floor(length / container);
  const found = justification(await bytesAt(data.offset, n * container), container, fmt.validBits, little);
  const what = `${where} gives ${fmt.validBits}-bit PCM in ${container * 8}-bit containers in a plain PCM fmt chunk (not WAVE_FORMAT_EXTENSIBLE), which leaves open where the bits sit`;
  if (found === 'right') {
    return { right: true, note: `${what}: the first ${n} samples keep their top ${container * 8 - fmt.validBits} bits as the sign of the rest and have data in their low bits, so they were read right-justified (each sample the container's low ${fmt.validBits} bits), not left-justified as the WAV format's PCM rules have it; readers differ on such files: check the levels against a known signal, or have the writer use WAVE_FORMAT_EXTENSIBLE` };
  }
  if (found === 'unclear') {
    return { right: false, note: `${what}: the first ${n} samples have data in their low ${container * 8 - fmt.validBits} bits and top bits that are no sign extension, so they are neither left- nor right-justified; they were read left-justified, as the WAV format's PCM rules have it (the top ${fmt.validBits} bits), and their low bits dropped: the header may be wrong (the samples may be ${container * 8}-bit): check the recorder or re-export the file` };
  }
  return none;
}

/** Reads and checks every header field; the samples stay on disk. A failure after a whole bext chunk carries its start. */
export async function readWavHeader(file: ByteReader, size: number): Promise<WavHeader> {
  const read: { start: Date | null } = { start: null };
  try {
    return await parseWavHeader(file, size, read);
  } catch (e) {
    throw withStart(e, read.start);
  }
}

/** The header's fields; `read.start` is set once a bext chunk before the data gives the origination, before the checks that may fail. */
async function parseWavHeader(file: ByteReader, size: number, read: { start: Date | null }): Promise<WavHeader> {
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
  let walked = await walkHeader(bytesAt, size, kind, -1);
  const notes: string[] = [];
  if (!walked.fmt || !walked.data) {
    // A writer that leaves out an odd chunk's pad byte throws every later chunk one byte off (a common writer fault).
    const unpadded = await unpaddedChunk(bytesAt, size, little, walked.odd);
    if (unpadded) {
      walked = await walkHeader(bytesAt, size, kind, unpadded.at);
      notes.push(`the "${printable(unpadded.id)}" chunk (byte ${unpadded.at}) has an odd size (${unpadded.size} bytes) but no pad byte after it, against the RIFF rule that pads every chunk to an even length: its writer left the pad out, so the chunks after it were read from one byte earlier, where they all lie whole; check the writer`);
    }
  }
  const { ds64, fmt, fmtAt } = walked;
  let { bext, data } = walked;
  // A file cut short in its data still has a whole bext chunk before it: its start places the failure in its period.
  read.start = bext ? bextOrigin(bext).start : null;
  if (sixtyFour && !ds64) throw new RecordingError(`byte 12: ${kind} file without its ds64 chunk (EBU Tech 3306); the header is damaged`);
  // A stream's data chunk before its fmt chunk: the walk ran past the end of the file looking for the fmt chunk.
  if (!fmt && data && !sixtyFour && data.size === STREAMED_SIZE) throw new RecordingError(streamedNotLast(data.size, data.offset - 4, 'no fmt chunk comes before it'));
  if (!fmt) throw new RecordingError(`no fmt chunk before byte ${size}; the header is missing or damaged`);
  if (!data) throw new RecordingError(`no data chunk before byte ${size}; the file holds no samples (an aborted capture?)`);
  const present = size - data.offset;
  // A size never written (a stream): the samples run to the end of the file when the data chunk is its last.
  const emptyBeforeChunks = async () => { const after = await walkTail(bytesAt, data!.offset, size, little); return after.unaccounted === 0 && !after.cut; };
  if (!sixtyFour && sizeNeverWritten(data.size, present, data.size === 0 && present > 0 && await emptyBeforeChunks())) {
    if (fmtAt > data.offset) throw new RecordingError(streamedNotLast(data.size, data.offset - 4, `the fmt chunk (byte ${fmtAt - 8}) follows it`));
    const streamed = streamedData(data.size, present, data.offset - 4, fmt.blockAlign);
    data = { offset: data.offset, size: streamed.size };
    notes.push(streamed.note);
  }
  const where = `fmt chunk (byte ${fmtAt})`;
  const justified = await lookAtJustification(bytesAt, fmt, data, size, little, where);
  if (justified.note) notes.push(justified.note);
  const encoding = wavEncoding(fmt, little, where, justified.right);
  if (fmt.sampleRate === 0) throw new RecordingError(`${where}: sample rate is 0; the header is damaged`);
  const frameBytes = fmt.blockAlign;
  if (streamedSize(data.size, present)) {
    throw new RecordingError(`byte ${data.offset - 4}: the data chunk's size (${data.size} bytes) is a stand-in, not the samples' size: the file holds ${present} bytes of samples and nothing after them. It was written as a stream (to a pipe) and its sizes were never filled in; write it again with its sizes (sox in.wav out.wav) and reduce the copy. Only if the capture really was over 2 GiB was the file cut short: then copy it again`);
  }
  if (data.size > present) {
    throw new RecordingError(`byte ${size}: the file ends ${data.size - present} bytes early: the data chunk declares ${Math.floor(data.size / frameBytes)} frames but only ${Math.floor(present / frameBytes)} are present; the file was cut short (interrupted copy or capture): recapture or copy it again`);
  }
  if (data.size % frameBytes) notes.push(`data chunk ends with ${data.size % frameBytes} bytes of a partial frame, ignored`);
  let end = data.offset + data.size + (data.size % 2);
  let tail = await walkTail(bytesAt, end, size, little);
  if (data.size % 2 && tail.unaccounted > 0) {
    // An odd data chunk's pad byte left out: the chunks after it lie one byte earlier.
    const early = await walkTail(bytesAt, end - 1, size, little);
    if (early.unaccounted === 0 && !early.cut) {
      notes.push(`the data chunk has an odd size (${data.size} bytes) but no pad byte after it, against the RIFF rule that pads every chunk to an even length: its writer left the pad out, so the chunks after it were read from one byte earlier, where they all lie whole; the samples are as the data chunk gives them`);
      [end, tail] = [end - 1, early];
    }
  }
  if (!bext && tail.bext) bext = await bytesAt(tail.bext.at, Math.min(tail.bext.size, 4096));
  const origin = bext ? bextOrigin(bext) : { start: null, note: null };
  const startTime = origin.start;
  if (origin.note) notes.push(origin.note);
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
