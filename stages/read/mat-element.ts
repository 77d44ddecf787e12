// MAT-file level 5 data elements (MathWorks, "MAT-File Format", version 5 and later): an 8-byte tag (data type, byte
// count) and its data padded to 8 bytes, or the small form (count in the tag's upper half, up to 4 bytes in its lower word).
import type { ByteCursor } from './mat-bytes.js';
import { checkChannelAxis, RecordingError } from './recording.js';

/** Data types of elements (the format's "miINT8" … "miUTF32"). */
export const MI = { INT8: 1, UINT8: 2, INT16: 3, UINT16: 4, INT32: 5, UINT32: 6, SINGLE: 7, DOUBLE: 9, INT64: 12, UINT64: 13, MATRIX: 14, COMPRESSED: 15, UTF8: 16, UTF16: 17, UTF32: 18 } as const;

/** Array classes (the format's "mxCELL_CLASS" … "mxUINT64_CLASS"). */
export const MX = { CELL: 1, STRUCT: 2, OBJECT: 3, CHAR: 4, SPARSE: 5, DOUBLE: 6, SINGLE: 7, INT8: 8, UINT8: 9, INT16: 10, UINT16: 11, INT32: 12, UINT32: 13, INT64: 14, UINT64: 15 } as const;

const CLASS_NAMES: Record<number, string> = { 1: 'cell', 2: 'struct', 3: 'object', 4: 'char', 5: 'sparse', 6: 'double', 7: 'single', 8: 'int8', 9: 'uint8', 10: 'int16', 11: 'uint16', 12: 'int32', 13: 'uint32', 14: 'int64', 15: 'uint64' };
export const className = (cls: number) => CLASS_NAMES[cls] ?? `class ${cls}`;

/** Bytes of one value of each numeric data type. */
export const TYPE_BYTES: Record<number, number> = { 1: 1, 2: 1, 3: 2, 4: 2, 5: 4, 6: 4, 7: 4, 9: 8, 12: 8, 13: 8, 16: 1, 17: 2, 18: 4 };

/** Bits of the integer classes, for their full scale. */
export const CLASS_BITS: Record<number, { bits: number; signed: boolean }> = { 8: { bits: 8, signed: true }, 9: { bits: 8, signed: false }, 10: { bits: 16, signed: true }, 11: { bits: 16, signed: false }, 12: { bits: 32, signed: true }, 13: { bits: 32, signed: false }, 14: { bits: 64, signed: true }, 15: { bits: 64, signed: false } };

/** Longest array name or field name read (MATLAB allows 63 characters; anything far longer is a damaged count). */
const MAX_NAME_BYTES = 4096;
/** Most dimensions an array may claim. */
const MAX_DIMS = 32;

export interface Tag { type: number; bytes: number; /** The data of a small element, already read. */ inline: Uint8Array | null }

export const pad8 = (n: number) => (n + 7) & ~7;

export function view(b: Uint8Array): DataView { return new DataView(b.buffer, b.byteOffset, b.byteLength); }

export async function readTag(c: ByteCursor, little: boolean, what: string): Promise<Tag> {
  const b = view(await c.take(8, what));
  const first = b.getUint32(0, little);
  // Small element: the upper 16 bits of the first word count the bytes (1 to 4), which follow in the second word.
  if (first >>> 16 !== 0) {
    const bytes = first >>> 16;
    if (bytes > 4) throw new RecordingError(`${what}: a small element claims ${bytes} bytes (at most 4 fit); the file is damaged`);
    return { type: first & 0xffff, bytes, inline: new Uint8Array(b.buffer, b.byteOffset + 4, bytes) };
  }
  return { type: first, bytes: b.getUint32(4, little), inline: null };
}

/** The data of an element whose tag was read, padding skipped; refused above `limit` bytes. */
export async function readData(c: ByteCursor, tag: Tag, limit: number, what: string): Promise<Uint8Array> {
  if (tag.inline) return tag.inline;
  if (tag.bytes > limit) throw new RecordingError(`${what} claims ${tag.bytes} bytes, more than the ${limit} such an element has; the file is damaged`);
  const data = await c.take(tag.bytes, what);
  await c.skip(pad8(tag.bytes) - tag.bytes, what);
  return data;
}

export interface ArrayHeader { cls: number; complex: boolean; logical: boolean; dims: number[]; name: string; /** Values it holds (the product of dims). */ count: number }

const latin1 = (b: Uint8Array) => Buffer.from(b.buffer, b.byteOffset, b.byteLength).toString('latin1');

/** The array flags, dimensions and name that open every array (miMATRIX) element's data. */
export async function readArrayHeader(c: ByteCursor, little: boolean, what: string): Promise<ArrayHeader> {
  const flagsTag = await readTag(c, little, `${what}: array flags`);
  if (flagsTag.type !== MI.UINT32 || flagsTag.bytes !== 8) throw new RecordingError(`${what}: the array flags are not 8 bytes of type miUINT32 (type ${flagsTag.type}, ${flagsTag.bytes} bytes); the file is damaged`);
  const flags = view(await readData(c, flagsTag, 8, `${what}: array flags`)).getUint32(0, little);
  const dimsTag = await readTag(c, little, `${what}: dimensions`);
  if (dimsTag.type !== MI.INT32 || dimsTag.bytes % 4 !== 0 || dimsTag.bytes < 8) throw new RecordingError(`${what}: the dimensions are not two or more miINT32 values (type ${dimsTag.type}, ${dimsTag.bytes} bytes); the file is damaged`);
  const dimsData = view(await readData(c, dimsTag, 4 * MAX_DIMS, `${what}: dimensions`));
  const dims = Array.from({ length: dimsData.byteLength / 4 }, (_, i) => dimsData.getInt32(4 * i, little));
  if (dims.some((d) => d < 0)) throw new RecordingError(`${what}: negative dimensions (${dims.join(' × ')}); the file is damaged`);
  const nameTag = await readTag(c, little, `${what}: name`);
  if (nameTag.type !== MI.INT8 && nameTag.type !== MI.UINT8 && nameTag.type !== MI.UTF8) throw new RecordingError(`${what}: the array name is of type ${nameTag.type}, not text; the file is damaged`);
  const name = latin1(await readData(c, nameTag, MAX_NAME_BYTES, `${what}: name`));
  return { cls: flags & 0xff, complex: (flags & 0x800) !== 0, logical: (flags & 0x200) !== 0, dims, name, count: dims.reduce((a, b) => a * b, 1) };
}

/** A struct's field names (the field name length element, then the names, each that long and NUL-padded). */
export async function readFieldNames(c: ByteCursor, little: boolean, what: string): Promise<string[]> {
  const lengthTag = await readTag(c, little, `${what}: field name length`);
  if (lengthTag.type !== MI.INT32 || lengthTag.bytes !== 4) throw new RecordingError(`${what}: the field name length is not one miINT32; the file is damaged`);
  const each = view(await readData(c, lengthTag, 4, `${what}: field name length`)).getInt32(0, little);
  if (!(each >= 1 && each <= MAX_NAME_BYTES)) throw new RecordingError(`${what}: a field name length of ${each}; the file is damaged`);
  const namesTag = await readTag(c, little, `${what}: field names`);
  if (namesTag.bytes % each !== 0) throw new RecordingError(`${what}: ${namesTag.bytes} bytes of field names are not a whole number of ${each}-byte names; the file is damaged`);
  const names = await readData(c, namesTag, 1 << 20, `${what}: field names`);
  return Array.from({ length: names.length / each }, (_, i) => latin1(names.subarray(i * each, (i + 1) * each)).replace(/\0[\s\S]*$/, ''));
}

/** Text of a char array's data: one byte a character (miUTF8, miINT8, miUINT8), two (miUINT16, miUTF16) or four. */
export function textOf(data: Uint8Array, type: number, little: boolean): string {
  if (type === MI.UTF8) return Buffer.from(data.buffer, data.byteOffset, data.byteLength).toString('utf8');
  const size = TYPE_BYTES[type];
  if (size === 1) return latin1(data);
  const v = view(data);
  const codes: number[] = [];
  for (let i = 0; i + size <= data.length; i += size) codes.push(size === 2 ? v.getUint16(i, little) : v.getUint32(i, little));
  // One call a character: spreading a names variable's codes into one call would pass more arguments than a call takes.
  return size === 2 ? charCodesText(codes) : codes.map((x) => String.fromCodePoint(x <= 0x10ffff ? x : 0xfffd)).join('');
}

/** The rows of a char matrix, one name a row, trailing blanks dropped: MATLAB stores it column by column (character j of row i at j × rows + i). */
export function charMatrixRows(text: string, rows: number, columns: number): string[] {
  return Array.from({ length: rows }, (_, i) => Array.from({ length: columns }, (_, j) => text[j * rows + i]).join('').replace(/[\s\0]+$/, ''));
}

/** Text of character codes held as numbers (a version 7.3 char array's uint16, a level 4 text matrix's doubles), however many. */
export const charCodesText = (codes: ArrayLike<number | bigint>) => Array.from(codes, (c) => String.fromCharCode(Number(c))).join('');

/** What a MAT-file holds, for messages: its first twelve variables, each described, and how many more. */
export function heldText<T>(items: readonly T[], describe: (item: T) => string, none: string): string {
  if (!items.length) return `the file holds ${none}`;
  return `the file holds ${items.slice(0, HELD_SHOWN).map(describe).join(', ')}${items.length > HELD_SHOWN ? `, and ${items.length - HELD_SHOWN} more` : ''}`;
}
const HELD_SHOWN = 12;

/** Whether an array of these dimensions is a vector (every side but one is 1). */
export const isVectorDims = (dims: number[]) => dims.filter((d) => d !== 1).length <= 1;

/**
 * How one variable of these dimensions holds its channels: a vector is one channel; a matrix needs `axis` (1: columns are
 * channels, MATLAB's usual samples × channels; 0: rows are). Trailing singleton dimensions beyond two are dropped.
 */
export function channelLayout(dims: number[], axis: 0 | 1 | null, where: string, axisWhere: string): { by: 'vector' | 'rows' | 'columns'; channels: number; frames: number } {
  const d = [...dims];
  while (d.length > 2 && d[d.length - 1] === 1) d.pop();
  if (d.length !== 2) throw new RecordingError(`${where} has ${d.length} dimensions (${dims.join(' × ')}); quern reads one axis of samples and at most one of channels`);
  const [rows, columns] = d;
  if (rows === 1 || columns === 1) return { by: 'vector', channels: 1, frames: rows * columns };
  if (axis == null) throw new RecordingError(`${where} has two axes (${rows} × ${columns}); set ${axisWhere} to 1 if its columns are channels (samples × channels), 0 if its rows are`);
  checkChannelAxis(rows, columns, axis, where, axisWhere);
  return axis === 0 ? { by: 'rows', channels: rows, frames: columns } : { by: 'columns', channels: columns, frames: rows };
}
