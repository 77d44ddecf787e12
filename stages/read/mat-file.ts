// A level 5 MAT-file's variables (MathWorks, "MAT-File Format"): its top-level elements listed, a variable or a struct's
// field found by its path, and a cursor left at its values, read as stored or inflated (a compressed element several
// channels read from, once into a temporary file).
import { open, type FileHandle } from 'node:fs/promises';
import { inflatedCursor, storedCursor, type ByteCursor } from './mat-bytes.js';
import { spoolInflated, type Spool } from './mat-spool.js';
import { charMatrixRows, className, heldText, CLASS_BITS, isVectorDims, MI, MX, readArrayHeader, readData, readFieldNames, readTag, textOf, TYPE_BYTES, type ArrayHeader } from './mat-element.js';
import { decodeInto, isNumericType } from './mat-values.js';
import { rateFrom, startFrom } from './setting-values.js';
import { MAX_CHANNELS, RecordingError } from './recording.js';

/** One variable at the file's top level: where its element lies and what it holds. */
export interface TopElement { header: ArrayHeader | null; start: number; bytes: number; compressed: boolean }

/** An array found by its path, with a cursor at the start of its first data element (the real part). */
interface Found { header: ArrayHeader; cursor: ByteCursor; where: string }

export interface MatFile {
  path: string; file: FileHandle; little: boolean; size: number; elements: TopElement[];
  /** Compressed elements that several channels read from: inflated once, into `spools`, when next opened. */
  shared: Set<TopElement>; spools: Map<TopElement, Spool>;
}

const summary = (h: ArrayHeader) => `${h.name} (${h.complex ? 'complex ' : ''}${h.logical ? 'logical' : className(h.cls)} ${h.dims.join(' × ')})`;
export const holds = (m: MatFile) => heldText(m.elements.filter((e) => e.header?.name), (e) => summary(e.header!), 'no named variables');

/** The element's bytes after its tag, inflated when compressed; for those, the inner array tag is read too. */
async function cursorOf(m: MatFile, e: TopElement, where: string): Promise<ByteCursor> {
  if (!e.compressed) return storedCursor(m.file, e.start + 8, e.bytes, where);
  let c: ByteCursor;
  if (m.shared.has(e)) {
    const spool = m.spools.get(e) ?? m.spools.set(e, await spoolInflated(m.path, e.start + 8, e.bytes, where, 8 + (await innerBytes(m, e, where)))).get(e)!;
    c = storedCursor(spool.file, 0, spool.bytes, `${where} (inflated)`);
  } else c = inflatedCursor(m.path, e.start + 8, e.bytes, where);
  try {
    const inner = await readTag(c, m.little, `${where}: its array tag`);
    if (inner.type !== MI.MATRIX) throw new RecordingError(`${where}: the compressed element holds data of type ${inner.type}, not an array (miMATRIX); the file is damaged`);
    return c;
  } catch (e) { c.close(); throw e; }
}

/** The byte count the array tag at the start of a compressed element declares: all it may inflate to, after the tag. */
async function innerBytes(m: MatFile, e: TopElement, where: string): Promise<number> {
  const c = inflatedCursor(m.path, e.start + 8, e.bytes, where);
  try { return (await readTag(c, m.little, `${where}: its array tag`)).bytes; } finally { c.close(); }
}

// MAT-file level 5 header (MathWorks, "MAT-File Format"): 116 bytes of text, 8 of subsystem offset, version 0x0100, and
// "IM" or "MI" as the file's byte order writes the characters "MI".
export async function readMatFile(path: string): Promise<MatFile> {
  const file = await open(path, 'r');
  try {
    const size = (await file.stat()).size;
    const head = Buffer.alloc(128);
    const { bytesRead } = await file.read(head, 0, 128, 0);
    const hdf5 = Buffer.from([0x89, 0x48, 0x44, 0x46, 0x0d, 0x0a, 0x1a, 0x0a]);
    if (bytesRead >= 8 && head.subarray(0, 8).equals(hdf5)) throw new RecordingError('byte 0: an HDF5 file, not a level 5 MAT-file: declare format: hdf5 for its group, with an hdf5 section naming its datasets');
    // Octave's own save format is text, whatever the file's name says.
    if (head.toString('latin1', 0, 19) === '# Created by Octave') throw new RecordingError('byte 0: Octave\'s text format, not a MAT-file; save it from Octave with save -mat7-binary (or -v7)');
    if (bytesRead < 128) throw new RecordingError(`byte ${bytesRead}: the file ends inside the 128-byte MAT-file header; the file is cut short: copy it again`);
    const order = head.toString('latin1', 126, 128);
    if (order !== 'IM' && order !== 'MI') throw new RecordingError(`byte 126: no byte-order mark ("IM" or "MI"), so not a level 5 MAT-file${/^MATLAB/.test(head.toString('latin1', 0, 6)) ? '; the header is damaged' : ' (nor does it open as a level 4 one)'}; check the group's format or the file`);
    const little = order === 'IM';
    const elements: TopElement[] = [];
    const tag = Buffer.alloc(8);
    for (let at = 128; at + 8 <= size;) {
      await file.read(tag, 0, 8, at);
      const type = little ? tag.readUInt32LE(0) : tag.readUInt32BE(0);
      const bytes = little ? tag.readUInt32LE(4) : tag.readUInt32BE(4);
      if (type !== MI.MATRIX && type !== MI.COMPRESSED) {
        throw new RecordingError(`byte ${at}: a top-level element of type ${type}, where variables (miMATRIX, or miCOMPRESSED) are; the file is damaged: copy it again`);
      }
      if (at + 8 + bytes > size) throw new RecordingError(`byte ${at}: a variable's element of ${bytes} bytes runs past the end of the file (${size} bytes); the file is cut short: copy it again`);
      elements.push({ header: null, start: at, bytes, compressed: type === MI.COMPRESSED });
      at += 8 + bytes;
    }
    const m: MatFile = { path, file, little, size, elements, shared: new Set(), spools: new Map() };
    for (const e of elements) {
      if (e.bytes === 0) continue;
      const c = await cursorOf(m, e, `the variable at byte ${e.start}`);
      try { e.header = await readArrayHeader(c, little, `the variable at byte ${e.start}`); } finally { c.close(); }
    }
    return m;
  } catch (e) {
    await file.close();
    throw e;
  }
}

/** Finds "name" or "struct.field…" and leaves a cursor at its data; structs must hold one element (1 × 1). */
export async function find(m: MatFile, path: string, what: string, where: string): Promise<Found> {
  const [top, ...fields] = path.split('.');
  const e = m.elements.find((x) => x.header?.name === top);
  if (!e) throw new RecordingError(`variable "${top}" (the ${what}) is not in the file; ${holds(m)}; correct ${where} or check the file`);
  const place = `variable "${top}" (byte ${e.start}${e.compressed ? ', compressed' : ''})`;
  const cursor = await cursorOf(m, e, place);
  try {
    let header = await readArrayHeader(cursor, m.little, place);
    for (let i = 0; i < fields.length; i++) {
      const inside = [top, ...fields.slice(0, i)].join('.');
      if (header.cls !== MX.STRUCT) throw new RecordingError(`"${inside}" is a ${className(header.cls)} array, not a struct, so it has no field "${fields[i]}"; correct ${where}`);
      if (header.count !== 1) throw new RecordingError(`"${inside}" is a ${header.dims.join(' × ')} struct array; quern reads fields of a 1 × 1 struct; correct ${where}`);
      const names = await readFieldNames(cursor, m.little, place);
      const k = names.indexOf(fields[i]);
      if (k < 0) throw new RecordingError(`struct "${inside}" has no field "${fields[i]}" (its fields: ${names.slice(0, 20).join(', ')}); correct ${where}`);
      for (let j = 0; j < k; j++) {
        const t = await readTag(cursor, m.little, `${place}: field "${names[j]}"`);
        await cursor.skip(t.bytes, `${place}: field "${names[j]}"`);
      }
      const t = await readTag(cursor, m.little, `${place}: field "${fields[i]}"`);
      if (t.type !== MI.MATRIX) throw new RecordingError(`${place}: field "${fields[i]}" is not an array element (type ${t.type}); the file is damaged`);
      if (t.bytes === 0) throw new RecordingError(`"${inside}.${fields[i]}" (the ${what}) is empty; check the file or ${where}`);
      header = { ...(await readArrayHeader(cursor, m.little, `${place}: field "${fields[i]}"`)), name: `${inside}.${fields[i]}` };
    }
    return { header, cursor, where: `variable "${path}" (byte ${e.start}${e.compressed ? ', compressed' : ''})` };
  } catch (err) { cursor.close(); throw err; }
}

/** The real part's data element must hold as many numbers as the dimensions say. */
function checkCount(f: Found, t: { type: number; bytes: number }): void {
  const size = TYPE_BYTES[t.type];
  if (!isNumericType(t.type)) throw new RecordingError(`${f.where}: its values are stored as data type ${t.type}, not numbers; the file is damaged`);
  if (t.bytes !== f.header.count * size) throw new RecordingError(`${f.where}: ${f.header.dims.join(' × ')} values need ${f.header.count * size} bytes of ${size}-byte numbers, but its data element has ${t.bytes}; the file is damaged`);
}

/** The value of a variable holding one number (any numeric class) or one line of text (char). */
async function valueOf(m: MatFile, path: string, what: string, where: string): Promise<number | string> {
  const f = await find(m, path, what, where);
  try {
    const t = await readTag(f.cursor, m.little, `${f.where}: its value`);
    if (f.header.cls === MX.CHAR) {
      if (!isVectorDims(f.header.dims)) throw new RecordingError(`${f.where} is a ${f.header.dims.join(' × ')} char array; the ${what} is one line of text or one number`);
      return textOf(await readData(f.cursor, t, 1024, `${f.where}: its text`), t.type, m.little).trim();
    }
    numericOrRefuse(f, what);
    if (f.header.count !== 1) throw new RecordingError(`${f.where} holds ${f.header.dims.join(' × ')} values; the ${what} is one number; correct ${where}`);
    checkCount(f, t);
    const out = new Float64Array(1);
    decodeInto(new Uint8Array(await readData(f.cursor, t, 8, `${f.where}: its value`)), t.type, m.little, 1, out, 0, 1, { scale: 1, shift: 0 });
    return out[0];
  } finally { f.cursor.close(); }
}

export function numericOrRefuse(f: Found, what: string): void {
  const h = f.header;
  if (!(h.cls in CLASS_BITS || h.cls === MX.DOUBLE || h.cls === MX.SINGLE)) throw new RecordingError(`${f.where} is a ${className(h.cls)} array; the ${what} must be numbers (double, single or an integer class)`);
  if (h.complex) throw new RecordingError(`${f.where} holds complex values; save the real part (real(x)) as the ${what}`);
  if (h.logical) throw new RecordingError(`${f.where} holds logical values, not the ${what}`);
}

/** Most bytes of channel names read: a names variable is small, and anything far larger is not one. */
const NAMES_BYTES = 1 << 20;

/** The names a variable holds: a cell array of char vectors (one a cell), or a char matrix of one name a row. */
export async function channelNamesOf(m: MatFile, path: string, where: string): Promise<string[]> {
  const f = await find(m, path, 'channel names', where);
  try {
    const h = f.header;
    if (h.cls === MX.CHAR) {
      const t = await readTag(f.cursor, m.little, `${f.where}: its text`);
      const d = h.dims.length === 2 ? h.dims : [h.count, 1];
      const text = textOf(await readData(f.cursor, t, NAMES_BYTES, `${f.where}: its text`), t.type, m.little);
      if (text.length !== h.count) throw new RecordingError(`${f.where}: a ${h.dims.join(' × ')} char array holds ${text.length} characters in UTF-8; save the names as a cell array ({'acc_x', 'acc_y'})`);
      return charMatrixRows(text, d[0], d[1]);
    }
    if (h.cls !== MX.CELL) throw new RecordingError(`${f.where} is a ${className(h.cls)} array; the channel names are a cell array of text ({'acc_x', 'acc_y'}) or a char matrix of one name a row; correct ${where}`);
    if (!isVectorDims(h.dims)) throw new RecordingError(`${f.where} is a ${h.dims.join(' × ')} cell array; the channel names are one row or column of cells; correct ${where}`);
    if (h.count > MAX_CHANNELS) throw new RecordingError(`${f.where} holds ${h.count} cells, more than the ${MAX_CHANNELS} channels a recording may have; check the file or ${where}`);
    const names: string[] = [];
    for (let i = 0; i < h.count; i++) {
      const at = `${f.where}: cell ${i + 1}`;
      const t = await readTag(f.cursor, m.little, at);
      if (t.type !== MI.MATRIX) throw new RecordingError(`${at} is not an array element (type ${t.type}); the file is damaged`);
      const end = f.cursor.at + t.bytes;
      if (t.bytes === 0) { names.push(''); continue; }
      const cell = await readArrayHeader(f.cursor, m.little, at);
      if (cell.cls !== MX.CHAR || !isVectorDims(cell.dims)) throw new RecordingError(`${at} is a ${className(cell.cls)} ${cell.dims.join(' × ')} array, not one line of text; correct ${where}`);
      if (cell.count === 0) names.push('');
      else {
        const d = await readTag(f.cursor, m.little, `${at}: its text`);
        names.push(textOf(await readData(f.cursor, d, NAMES_BYTES, `${at}: its text`), d.type, m.little).trim());
      }
      if (f.cursor.at > end) throw new RecordingError(`${at}: its parts run past the ${t.bytes} bytes its element declares; the file is damaged`);
      await f.cursor.skip(end - f.cursor.at, at);
    }
    return names;
  } finally { f.cursor.close(); }
}

export const sampleRateOf = async (m: MatFile, path: string, where: string) => rateFrom(await valueOf(m, path, 'sample rate', where), `variable "${path}"`, where);
export const startTimeOf = async (m: MatFile, path: string, where: string) => startFrom(await valueOf(m, path, 'start time', where), `variable "${path}"`, where);

/** Where one channel's values are read from: a cursor at its first value, and how many values apart its frames are. */
export interface ChannelSource { cursor: ByteCursor; type: number; inline: Uint8Array | null; /** Channels interleaved in this source (1 for a column or a vector). */ width: number }

/** Opens `path` again and skips to value `first` of its data, for a column of a samples × channels variable. */
export async function sourceAt(m: MatFile, path: string, what: string, where: string, first: number): Promise<ChannelSource & { header: ArrayHeader; where: string }> {
  const f = await find(m, path, what, where);
  try {
    numericOrRefuse(f, what);
    const t = await readTag(f.cursor, m.little, `${f.where}: its values`);
    checkCount(f, t);
    const skip = first * TYPE_BYTES[t.type];
    if (skip > 0 && !t.inline) await f.cursor.skip(skip, `${f.where}: its column`);
    return { cursor: f.cursor, type: t.type, inline: t.inline?.subarray(skip) ?? null, width: 1, header: f.header, where: f.where };
  } catch (e) { f.cursor.close(); throw e; }
}

/** The spools' files and folders removed, the file closed; what fails in that is of no more use to report. */
export async function closeAll(m: MatFile, sources: ChannelSource[]): Promise<void> {
  for (const s of sources.splice(0)) s.cursor.close();
  for (const spool of m.spools.values()) await spool.remove();
  m.spools.clear();
  await m.file.close().catch(() => {});
}

/** What the MAT-file reader asks of a file's variables, whatever its level: 5 (here) or 4 (mat4.ts). */
export interface MatVariables {
  little: boolean;
  /** What the file holds, for messages. */
  holds(): string;
  /** A cursor at value `first` of a numeric variable, and its header. */
  sourceAt(path: string, what: string, where: string, first: number): Promise<ChannelSource & { header: ArrayHeader; where: string }>;
  sampleRateOf(path: string, where: string): Promise<number>;
  startTimeOf(path: string, where: string): Promise<Date>;
  channelNamesOf(path: string, where: string): Promise<string[]>;
  /** The variables the recording's sources read, once each a source: those read by several are readied for it. */
  readBy(paths: string[]): void;
  close(sources: ChannelSource[]): Promise<void>;
}

/** A level 5 file's variables: a compressed element several sources read from is inflated once (mat-spool.ts). */
export function level5(m: MatFile): MatVariables {
  const topOf = (path: string) => m.elements.find((e) => e.header?.name === path.split('.')[0]);
  return {
    little: m.little,
    holds: () => holds(m),
    sourceAt: (path, what, where, first) => sourceAt(m, path, what, where, first),
    sampleRateOf: (path, where) => sampleRateOf(m, path, where),
    startTimeOf: (path, where) => startTimeOf(m, path, where),
    channelNamesOf: (path, where) => channelNamesOf(m, path, where),
    readBy(paths) {
      const uses = new Map<TopElement, number>();
      for (const p of paths) { const e = topOf(p); if (e) uses.set(e, (uses.get(e) ?? 0) + 1); }
      for (const [e, n] of uses) if (n > 1 && e.compressed) m.shared.add(e);
    },
    close: (sources) => closeAll(m, sources),
  };
}
