// One stored entry as bytes: a fixed header (magic, lengths, a checksum of each part), the entry's facts as JSON,
// then its results as deflated JSON (with their float32 arrays, when they have any, as raw bytes after it). The checksums
// let a reader tell a damaged or truncated entry from a sound one.
import { isAscii } from 'node:buffer';
import { createHash } from 'node:crypto';
import { deflateRawSync, inflateRawSync } from 'node:zlib';
import type { RecordingOutput } from '../reduce/result.js';

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

/** The results part's pieces: deflated JSON alone, or the marker, the JSON's length, the JSON and the arrays' bytes. */
function resultsPieces(results: EntryResults): Uint8Array[] {
  const arrays: Float32Array[] = [];
  let count = 0;
  const json = asciiJson(results, (_key, v) => {
    if (!(v instanceof Float32Array)) return v;
    arrays.push(v);
    count += v.length;
    return { [ARRAY_KEY]: [count - v.length, v.length] };
  });
  const deflated = deflateRawSync(json, { level: 1, chunkSize: ZLIB_CHUNK_BYTES });
  if (!arrays.length) return [deflated];
  const head = Buffer.allocUnsafe(5);
  head[0] = WITH_ARRAYS;
  head.writeUInt32LE(deflated.length, 1);
  // The machine's float32 bytes: little-endian, as everywhere Node runs.
  return [head, deflated, ...arrays.map((a) => new Uint8Array(a.buffer, a.byteOffset, a.byteLength))];
}

/** The record of an entry: facts in the clear, results deflated (their float32 arrays raw); each part with its SHA-256. */
export function encodeRecord(facts: EntryFacts, results: EntryResults | Uint8Array): Uint8Array {
  const meta = asciiJson(facts);
  const pieces = results instanceof Uint8Array ? [results] : resultsPieces(results);
  const bodyLength = pieces.reduce((n, p) => n + p.length, 0), bodyStart = HEADER_BYTES + meta.length;
  const out = Buffer.allocUnsafe(bodyStart + bodyLength);
  out.writeUInt32LE(MAGIC, 0);
  out.writeUInt32LE(meta.length, 4);
  out.writeUInt32LE(bodyLength, 8);
  sha256(meta).copy(out, 12);
  meta.copy(out, HEADER_BYTES);
  let at = bodyStart;
  for (const p of pieces) { out.set(p, at); at += p.length; }
  sha256(out.subarray(bodyStart)).copy(out, 44);
  return out;
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

/** Puts each array in place of its { "$f32": [first, count] } among the results, as a view of `values`. */
function placeArrays(node: Record<string, unknown> | unknown[], values: Float32Array): void {
  for (const key in node) {
    const v = (node as Record<string, unknown>)[key];
    if (v === null || typeof v !== 'object') continue;
    const at = (v as Record<string, unknown>)[ARRAY_KEY] as [number, number] | undefined;
    if (!at) { placeArrays(v as Record<string, unknown>, values); continue; }
    const [first, count] = at;
    if (!(first >= 0 && count >= 0 && first + count <= values.length)) throw new Error(`stored results name float32 values ${first}…${first + count} of ${values.length}`);
    (node as Record<string, unknown>)[key] = values.subarray(first, first + count);
  }
}

export function decodeResults(body: Uint8Array): EntryResults {
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

export const joinEntry = (facts: EntryFacts, results: EntryResults): CacheEntry => ({ ...facts, ...results });
