// One stored entry as bytes: a fixed header (magic, lengths, a checksum of each part), the entry's facts as JSON,
// then its results as deflated JSON (with their float32 arrays, when they have any, as raw bytes after it). The checksums
// let a reader tell a damaged or truncated entry from a sound one.
import { isAscii } from 'node:buffer';
import { createHash } from 'node:crypto';
import { deflateRawSync, inflateRawSync } from 'node:zlib';
import type { RecordingOutput } from '../reduce/result.js';
import { PackedRows } from '../../stages/packed-rows.js';

/** "QRN1", little-endian: the first four bytes of every record. */
export const MAGIC = 0x314e5251;
/** magic, facts length, results length (u32 each), SHA-256 of the facts, SHA-256 of the results. */
export const HEADER_BYTES = 12 + 32 + 32;
/** No entry is this large; a length beyond it is damage, not data. */
export const MAX_PART_BYTES = 1 << 30;

/** What identifies a recording's content: size and modification time, and a content hash when those cannot be trusted. */
export interface Identity { size: number; mtimeMs: number; hash: string | null }

/** The failure key of a recording whose reduction stalled once: the next run reads it again (a second stall is kept). */
export const STALLED = 'try-again';
/** The failure key of a recording a run did not try (those before it stalled in a row): the next run reads it. */
export const NOT_TRIED = 'not-tried';
/** The failure key of a recording that changed while it was read (a capture still being written): the next run reads it again. */
export const READ_AGAIN = 'read-again';

/** The facts of an entry that deciding and run.json need, kept apart from the (larger) results. */
export interface EntryFacts {
  recording: string;
  group: string;
  status: 'reduced' | 'failed';
  reason?: string;
  version: string;
  identity: Identity;
  /** When the file was read (ms since the epoch): a file modified within 2 s of it gets a content hash. */
  readAtMs: number;
  declKey: string;
  /** The key each stored group was computed under. */
  groupKeys: Record<string, string>;
  /** For a failed recording: the spec hash it failed under, or STALLED / NOT_TRIED / READ_AGAIN for a failure the next run should not trust. */
  failureKey?: string;
  seconds: number;
  frames: number;
  sampleRate: number | null;
  startTime: string | null;
  channels: number;
  /** Notes for run.json: the reader's under "", each group's under its name. */
  notes: Record<string, string[]>;
  /** When this record was stored (ms since the epoch): the newest record of a recording is its entry. */
  storedAt: number;
}

/** What the tables are made from: the same bytes whenever the results are the same. */
export type EntryResults = Pick<RecordingOutput, 'recording' | 'group' | 'status' | 'reason' | 'base' | 'groups'>;

export type CacheEntry = EntryFacts & RecordingOutput;

export const sha256 = (bytes: Uint8Array) => createHash('sha256').update(bytes).digest();

/** The facts and results of an entry, split for storing. */
export function splitEntry(e: CacheEntry, storedAt = Date.now()): { facts: EntryFacts; results: EntryResults } {
  const notes: Record<string, string[]> = { '': e.base?.notes ?? [] };
  for (const [g, out] of Object.entries(e.groups)) if (out.notes.length) notes[g] = out.notes;
  const facts: EntryFacts = {
    recording: e.recording, group: e.group, status: e.status, ...(e.reason ? { reason: e.reason } : {}), version: e.version, identity: e.identity,
    readAtMs: e.readAtMs, declKey: e.declKey, groupKeys: e.groupKeys, ...(e.failureKey ? { failureKey: e.failureKey } : {}), seconds: e.seconds,
    frames: e.base?.frames ?? 0, sampleRate: e.base?.sampleRate ?? null, startTime: e.base?.header.start_time ?? null, channels: e.base?.channels.length ?? 0,
    notes, storedAt,
  };
  return { facts, results: { recording: e.recording, group: e.group, status: e.status, ...(e.reason ? { reason: e.reason } : {}), base: e.base, groups: e.groups } };
}

/**
 * zlib's output buffer: under half of Node's 8 KB pool, so a small entry's results come from the pool rather than a
 * fresh 16 KB allocation each (which piled up between collections in the workers' allocator); the bytes are the same.
 */
const ZLIB_CHUNK_BYTES = 4000;

/**
 * JSON in ASCII alone, as bytes, other characters written as \u escapes (RFC 8259, section 7): ASCII is read back some 50
 * times faster than UTF-8 with a few characters like ² or ≥ among it (0.01 against 0.7 ms for an 88 KB entry), and
 * entries are read back whole several times. The escapes are made on the UTF-8 bytes, which deflating needs anyway: a
 * tenth of a millisecond an entry, where escaping the text with a regular expression took a millisecond.
 */
export function asciiJson(value: unknown, replacer?: (key: string, value: unknown) => unknown): Buffer {
  const utf8 = Buffer.from(JSON.stringify(value, replacer), 'utf8');
  let wide = 0;
  for (let i = 0; i < utf8.length; i++) if (utf8[i] >= 0x80) wide++;
  if (!wide) return utf8;
  // A character of n bytes (2 to 4) becomes one escape of 6 bytes, or two for 4: at most 3 bytes out for each byte in.
  const out = Buffer.allocUnsafe(utf8.length + wide * 2);
  let o = 0;
  const escape = (unit: number) => {
    out[o++] = 0x5c; out[o++] = 0x75;
    for (let shift = 12; shift >= 0; shift -= 4) out[o++] = HEX[(unit >> shift) & 15];
  };
  for (let i = 0; i < utf8.length;) {
    const b = utf8[i];
    if (b < 0x80) { out[o++] = b; i++; continue; }
    const more = b >= 0xf0 ? 3 : b >= 0xe0 ? 2 : 1;
    let cp = b & (0x3f >> more);
    for (let k = 1; k <= more; k++) cp = (cp << 6) | (utf8[i + k] & 0x3f);
    i += more + 1;
    if (cp >= 0x10000) { escape(0xd800 + ((cp - 0x10000) >> 10)); escape(0xdc00 + ((cp - 0x10000) & 0x3ff)); } else escape(cp);
  }
  return out.subarray(0, o);
}
const HEX = Buffer.from('0123456789abcdef', 'latin1');

/** Stored JSON as text: ASCII (every record since asciiJson) read as such, older records as UTF-8. */
const textOf = (bytes: Buffer): string => (isAscii(bytes) ? bytes.toString('latin1') : bytes.toString('utf8'));

/**
 * The first byte of a results part whose float32 arrays (kept spectra, the pictures' data) follow its deflated JSON as raw
 * bytes: no raw deflate stream starts with it (its block type, 3, is reserved: RFC 1951, section 3.2.3). Results without
 * such arrays are deflated JSON alone, as every record stored before them. Raw, the arrays are no base64 text to deflate
 * when stored and to inflate and parse when read: a four-channel entry of the default spec holds some 32 KB of them.
 */
const WITH_ARRAYS = 0xff;
/** In the results' JSON, where an array's values lie among the part's float32 values: { "$f32": [first, count] }. */
const ARRAY_KEY = '$f32';

/**
 * The first byte of a results part that holds packed table columns (secondary tables' rows) as well: their float64 values
 * follow the float32 arrays as raw bytes, aligned to 8 bytes from the record's start so a record read into memory of its
 * own is viewed, not copied. Like 0xFF, no raw deflate stream starts with it (block type 3).
 */
const WITH_COLUMNS = 0xfe;
/** In the results' JSON, a packed table: { "$rows": { names, length, runs, first } }, its columns one after another from `first`. */
const ROWS_KEY = '$rows';
/** Raw columns smaller than this go into the record's first piece, so a small entry stays one piece of memory. */
const TAIL_BYTES = 1 << 20;

interface StoredRows { names: string[]; length: number; runs: number[]; first: number }

/**
 * A stored table left where it lies: its names, rows and channel runs, and where in the pack file its columns start, one
 * after another (`at`: the first value's byte offset). The outputs read such a table a record batch at a time.
 */
export interface ColumnsInPack { file: string; names: string[]; length: number; runs: number[]; at: number }

/** Where a body whose tables are left in place lies: its pack file and its byte offset there. */
export interface BodyPlace { file: string; offset: number }

/**
 * The results part's pieces: deflated JSON alone; or the marker, the JSON's length, the JSON and the arrays' bytes; or, with
 * packed tables, the marker, the JSON's and float32 values' lengths, the padding, the JSON, the float32 and float64
 * values. `at` is where the part starts in the record (for the float64 values' alignment).
 */
function resultsPieces(results: EntryResults, at: number): Uint8Array[] {
  const arrays: Float32Array[] = [];
  let count = 0;
  const columns: Float64Array[] = [];
  let values = 0, packed = false;
  const json = asciiJson(results, (_key, v) => {
    if (v instanceof PackedRows) {
      packed = true;
      const stored: StoredRows = { names: v.names, length: v.length, runs: v.runs, first: values };
      for (let c = 0; c < v.names.length; c++) columns.push(...v.chunksOf(c));
      values += v.length * v.names.length;
      return { [ROWS_KEY]: stored };
    }
    if (!(v instanceof Float32Array)) return v;
    arrays.push(v);
    count += v.length;
    return { [ARRAY_KEY]: [count - v.length, v.length] };
  });
  const deflated = deflateRawSync(json, { level: 1, chunkSize: ZLIB_CHUNK_BYTES });
  const bytesOf = (a: Float32Array | Float64Array) => new Uint8Array(a.buffer, a.byteOffset, a.byteLength);
  // A packed table, even one of no rows, is decoded only by the form that places tables (a window shorter than the recording).
  if (!packed) {
    if (!arrays.length) return [deflated];
    const head = Buffer.allocUnsafe(5);
    head[0] = WITH_ARRAYS;
    head.writeUInt32LE(deflated.length, 1);
    // The machine's float32 bytes: little-endian, as everywhere Node runs.
    return [head, deflated, ...arrays.map(bytesOf)];
  }
  const pad = (8 - ((at + 10 + deflated.length + count * 4) % 8)) % 8;
  const head = Buffer.alloc(10);
  head[0] = WITH_COLUMNS;
  head.writeUInt32LE(deflated.length, 1);
  head.writeUInt32LE(count, 5);
  head[9] = pad;
  return [head, deflated, ...arrays.map(bytesOf), new Uint8Array(pad), ...columns.map(bytesOf)];
}

/**
 * The record of an entry, as its first piece (header, facts, the results up to their large raw columns) and the rest
 * (views of the packed tables' columns, in order): the columns of a long recording's tables are never copied into one
 * array beside themselves. Each part carries its SHA-256.
 */
export function encodeRecordPieces(facts: EntryFacts, results: EntryResults | Uint8Array): { head: Buffer; tail: Uint8Array[] } {
  const meta = asciiJson(facts);
  const bodyStart = HEADER_BYTES + meta.length;
  const pieces = results instanceof Uint8Array ? [results] : resultsPieces(results, bodyStart);
  // Small pieces are copied into the first; from the first large column on, the rest stay views.
  let split = pieces.length;
  for (let i = 1, rest = pieces.reduce((n, p) => n + p.length, 0); i < pieces.length; i++) {
    rest -= pieces[i - 1].length;
    if (rest >= TAIL_BYTES && pieces[i].length >= TAIL_BYTES >> 4) { split = i; break; }
  }
  const headLength = pieces.slice(0, split).reduce((n, p) => n + p.length, 0);
  const tail = pieces.slice(split);
  const bodyLength = headLength + tail.reduce((n, p) => n + p.length, 0);
  const out = Buffer.allocUnsafe(bodyStart + headLength);
  out.writeUInt32LE(MAGIC, 0);
  out.writeUInt32LE(meta.length, 4);
  out.writeUInt32LE(bodyLength, 8);
  sha256(meta).copy(out, 12);
  meta.copy(out, HEADER_BYTES);
  let at = bodyStart;
  for (const p of pieces.slice(0, split)) { out.set(p, at); at += p.length; }
  const hash = createHash('sha256').update(out.subarray(bodyStart));
  for (const p of tail) hash.update(p);
  hash.digest().copy(out, 44);
  return { head: out, tail };
}

/** The record of an entry: facts in the clear, results deflated (their float32 arrays and table columns raw); each part with its SHA-256. */
export function encodeRecord(facts: EntryFacts, results: EntryResults | Uint8Array): Uint8Array {
  const { head, tail } = encodeRecordPieces(facts, results);
  return tail.length ? Buffer.concat([head, ...tail]) : head;
}

/** The deflated results of a record (to store them again under new facts without decoding them). */
export const recordBody = (record: Uint8Array) => {
  const b = Buffer.from(record.buffer, record.byteOffset, record.byteLength);
  const metaLength = b.readUInt32LE(4);
  return b.subarray(HEADER_BYTES + metaLength);
};

/** The facts of a record. */
export const recordFacts = (record: Uint8Array): EntryFacts => {
  const b = Buffer.from(record.buffer, record.byteOffset, record.byteLength);
  return JSON.parse(textOf(b.subarray(HEADER_BYTES, HEADER_BYTES + b.readUInt32LE(4))));
};

const inflatedJson = (bytes: Uint8Array) => JSON.parse(textOf(inflateRawSync(bytes, { chunkSize: ZLIB_CHUNK_BYTES })));

/** A stored table's columns as views of `columns`, packed again; without columns, its names alone and no rows, or, at a place, where they lie. */
function storedRows(s: StoredRows, columns: Float64Array | BodyPlace | null): PackedRows | ColumnsInPack {
  const { names, length, runs, first } = s;
  if (!columns) return PackedRows.stored(names, [], names.map(() => new Float64Array(0)), 0);
  if (!(columns instanceof Float64Array)) return { file: columns.file, names, length, runs, at: columns.offset + first * 8 };
  if (!(first >= 0 && length >= 0 && first + length * names.length <= columns.length)) throw new Error(`stored results name float64 values ${first}…${first + length * names.length} of ${columns.length}`);
  return PackedRows.stored(names, runs, names.map((_, c) => columns.subarray(first + c * length, first + (c + 1) * length)), length);
}

/**
 * Puts each array in place of its { "$f32": [first, count] } among the results, as a view of `values`, and each packed
 * table in place of its { "$rows": … }, its columns views of `columns`.
 */
function placeArrays(node: Record<string, unknown> | unknown[], values: Float32Array, columns: Float64Array | BodyPlace | null = new Float64Array(0)): void {
  for (const key in node) {
    const v = (node as Record<string, unknown>)[key];
    if (v === null || typeof v !== 'object') continue;
    const rows = (v as Record<string, unknown>)[ROWS_KEY] as StoredRows | undefined;
    if (rows) { (node as Record<string, unknown>)[key] = storedRows(rows, columns); continue; }
    const at = (v as Record<string, unknown>)[ARRAY_KEY] as [number, number] | undefined;
    if (!at) { placeArrays(v as Record<string, unknown>, values, columns); continue; }
    const [first, count] = at;
    if (!(first >= 0 && count >= 0 && first + count <= values.length)) throw new Error(`stored results name float32 values ${first}…${first + count} of ${values.length}`);
    (node as Record<string, unknown>)[key] = values.subarray(first, first + count);
  }
}

/**
 * Where a results part's packed table columns start, from its first 10 bytes: null for results without them. A reader that
 * needs no table rows (the trends) reads the part up to there and only checks the rest.
 */
export function columnsAt(head: Uint8Array): number | null {
  if (head.length < 10 || head[0] !== WITH_COLUMNS) return null;
  const b = Buffer.from(head.buffer, head.byteOffset, head.byteLength);
  return 10 + b.readUInt32LE(1) + b.readUInt32LE(5) * 4 + b[9];
}

/**
 * An entry's results. With `tables` false, or the place of the body in its pack, the part may be cut where its columns
 * start (`columnsAt`): its tables then read empty, or as where their columns lie (`ColumnsInPack`).
 */
export function decodeResults(body: Uint8Array, tables: boolean | BodyPlace = true): EntryResults {
  if (body[0] === WITH_COLUMNS) return withColumns(body, tables);
  if (body[0] !== WITH_ARRAYS) return inflatedJson(body);
  const b = Buffer.from(body.buffer, body.byteOffset, body.byteLength);
  const jsonEnd = 5 + b.readUInt32LE(1);
  const results = inflatedJson(b.subarray(5, jsonEnd)) as EntryResults;
  // Copied once into a buffer of their own, aligned for float32, which every array of the entry views.
  const values = new Float32Array((b.length - jsonEnd) >> 2);
  new Uint8Array(values.buffer).set(b.subarray(jsonEnd, jsonEnd + values.length * 4));
  placeArrays(results as unknown as Record<string, unknown>, values);
  return results;
}

/** Results with packed tables: the float64 values viewed where they lie when aligned (a record read into its own memory), else copied once. */
function withColumns(body: Uint8Array, tables: boolean | BodyPlace): EntryResults {
  const b = Buffer.from(body.buffer, body.byteOffset, body.byteLength);
  const jsonEnd = 10 + b.readUInt32LE(1), count = b.readUInt32LE(5), pad = b[9];
  const f64Start = jsonEnd + count * 4 + pad;
  if (tables !== true) {
    const results = inflatedJson(b.subarray(10, jsonEnd)) as EntryResults;
    const values = new Float32Array(count);
    new Uint8Array(values.buffer).set(b.subarray(jsonEnd, jsonEnd + count * 4));
    placeArrays(results as unknown as Record<string, unknown>, values, tables ? { file: tables.file, offset: tables.offset + f64Start } : null);
    return results;
  }
  if (f64Start > b.length || (b.length - f64Start) % 8) throw new Error(`stored results of ${b.length} bytes hold ${count} float32 values and no whole float64 values after them`);
  const results = inflatedJson(b.subarray(10, jsonEnd)) as EntryResults;
  const values = new Float32Array(count);
  new Uint8Array(values.buffer).set(b.subarray(jsonEnd, jsonEnd + count * 4));
  const n = (b.length - f64Start) / 8, at = b.byteOffset + f64Start;
  const columns = at % 8 === 0 ? new Float64Array(b.buffer, at, n) : new Float64Array(n);
  if (at % 8) new Uint8Array(columns.buffer).set(b.subarray(f64Start));
  placeArrays(results as unknown as Record<string, unknown>, values, columns);
  return results;
}

export const joinEntry = (facts: EntryFacts, results: EntryResults): CacheEntry => ({ ...facts, ...results });
