// The entries of an output folder in packed columns: a row per recording, its place in a pack and its facts as typed
// arrays, and the values many entries share (group, version, keys, notes) stored once; the values each entry has its own
// (start time, content hash) are numbers and bytes, not strings. 100,000 entries take about 15 MB here, where objects took
// about 60 MB; an entry's facts are made as an object only when asked for.
import type { Located } from './pack.js';
import type { EntryFacts } from './record.js';

const SHA_BYTES = 32;
const FIRST_ROWS = 1024;

/** A recording's entry as stored in the table: reads its row whenever asked, so it is always the recording's current entry. */
export class StoredEntry implements Located {
  constructor(private readonly table: EntryTable, readonly row: number) {}
  get file(): string { return this.table.fileOf(this.row); }
  get offset(): number { return this.table.offset[this.row]; }
  get length(): number { return this.table.length[this.row]; }
  get bodySha(): string { return this.table.bodyShaOf(this.row); }
  get facts(): EntryFacts { return this.table.factsOf(this.row); }
  /** The entry's status and group, read without making its facts. */
  get status(): EntryFacts['status'] { return this.table.failed[this.row] ? 'failed' : 'reduced'; }
  get group(): string { return this.table.groupOf(this.row); }
}

export class EntryTable {
  /** Recording → row. */
  readonly rows = new Map<string, number>();
  private recordings: string[] = [];
  private files: string[] = [];
  private fileIds = new Map<string, number>();
  /** Shared values; index 0 stands for null or absent. */
  private values: unknown[] = [null];
  private valueIds = new Map<string, number>();
  private count = 0;

  file = new Uint16Array(0);
  offset = new Float64Array(0);
  length = new Uint32Array(0);
  sha = new Uint8Array(0);
  failed = new Uint8Array(0);
  /** Content hashes as bytes, where `hashed` is 1 (otherwise the hash, or its absence, is among the shared values); made with the first. */
  private hash: Uint8Array | null = null;
  private hashed = new Uint8Array(0);
  // group, version, declKey, groupKeys, notes, failureKey, reason, startTime, hash: indices into `values`.
  private shared = new Uint32Array(0);
  // size, mtimeMs, readAtMs, seconds, frames, sampleRate (NaN: null), channels, storedAt, start time (ms; NaN: among the shared values).
  private numbers = new Float64Array(0);

  get size(): number { return this.count; }

  /** Sets a recording's entry (its row is kept when it has one); returns the row. */
  set(place: { file: string; offset: number; length: number; bodySha: Uint8Array }, f: EntryFacts): number {
    let row = this.rows.get(f.recording);
    if (row === undefined) {
      row = this.count++;
      if (row >= this.file.length) this.grow(Math.max(FIRST_ROWS, this.file.length * 2));
      this.rows.set(f.recording, row);
      this.recordings[row] = f.recording;
    }
    this.file[row] = this.fileIds.get(place.file) ?? this.fileIds.set(place.file, this.files.push(place.file) - 1).get(place.file)!;
    this.offset[row] = place.offset;
    this.length[row] = place.length;
    this.sha.set(place.bodySha, row * SHA_BYTES);
    this.failed[row] = f.status === 'failed' ? 1 : 0;
    const s = row * SHARED;
    const startMs = startAsNumber(f.startTime);
    const hash = f.identity.hash;
    this.hashed[row] = hash !== null && HEX_SHA.test(hash) ? 1 : 0;
    if (this.hashed[row]) (this.hash ??= new Uint8Array(this.file.length * SHA_BYTES)).set(Buffer.from(hash!, 'hex'), row * SHA_BYTES);
    const shared = [f.group, f.version, f.declKey, f.groupKeys, f.notes, f.failureKey, f.reason, Number.isNaN(startMs) ? f.startTime : null, this.hashed[row] ? null : hash];
    for (let i = 0; i < SHARED; i++) this.shared[s + i] = this.valueId(shared[i]);
    const n = row * NUMBERS;
    const numbers = [f.identity.size, f.identity.mtimeMs, f.readAtMs, f.seconds, f.frames, f.sampleRate ?? NaN, f.channels, f.storedAt, startMs];
    for (let i = 0; i < NUMBERS; i++) this.numbers[n + i] = numbers[i];
    return row;
  }

  entry(recording: string): StoredEntry | undefined {
    const row = this.rows.get(recording);
    return row === undefined ? undefined : new StoredEntry(this, row);
  }

  at(row: number): StoredEntry { return new StoredEntry(this, row); }

  storedAt(row: number): number { return this.numbers[row * NUMBERS + 7]; }
  groupOf(row: number): string { return this.values[this.shared[row * SHARED]] as string; }
  fileOf(row: number): string { return this.files[this.file[row]]; }
  bodyShaOf(row: number): string { return Buffer.from(this.sha.buffer, row * SHA_BYTES, SHA_BYTES).toString('hex'); }

  /** The facts of a row, as they were stored (the same keys in the same order). */
  factsOf(row: number): EntryFacts {
    const s = row * SHARED, n = row * NUMBERS;
    const v = (i: number) => this.values[this.shared[s + i]];
    const num = (i: number) => this.numbers[n + i];
    const failureKey = v(5) as string | null, reason = v(6) as string | null, sampleRate = num(5);
    return {
      recording: this.recordings[row], group: v(0) as string, status: this.failed[row] ? 'failed' : 'reduced', ...(reason ? { reason } : {}), version: v(1) as string,
      identity: { size: num(0), mtimeMs: num(1), hash: this.hashOf(row) }, readAtMs: num(2), declKey: v(2) as string,
      groupKeys: v(3) as Record<string, string>, ...(failureKey ? { failureKey } : {}), seconds: num(3), frames: num(4),
      sampleRate: Number.isNaN(sampleRate) ? null : sampleRate, startTime: this.startOf(row), channels: num(6), notes: v(4) as Record<string, string[]>, storedAt: num(7),
    };
  }

  /** A recording's size, modification time and start as its entry knows them, without making its facts. */
  identityOf(row: number): { size: number; mtimeMs: number; startMs: number | null } {
    const n = row * NUMBERS;
    return { size: this.numbers[n], mtimeMs: this.numbers[n + 1], startMs: this.startMsOf(row) };
  }

  /** A row's start as ms since the epoch (null: none), without making its text. */
  startMsOf(row: number): number | null {
    const ms = this.numbers[row * NUMBERS + 8];
    if (!Number.isNaN(ms)) return ms;
    const text = this.values[this.shared[row * SHARED + 7]] as string | null;
    return text ? Date.parse(text) : null;
  }

  private startOf(row: number): string | null {
    const ms = this.numbers[row * NUMBERS + 8];
    return Number.isNaN(ms) ? this.values[this.shared[row * SHARED + 7]] as string | null : new Date(ms).toISOString();
  }

  private hashOf(row: number): string | null {
    return this.hash && this.hashed[row] ? Buffer.from(this.hash.buffer, row * SHA_BYTES, SHA_BYTES).toString('hex') : this.values[this.shared[row * SHARED + 8]] as string | null;
  }

  private valueId(value: unknown): number {
    if (value === null || value === undefined) return 0;
    const key = typeof value === 'string' ? `s${value}` : `j${JSON.stringify(value)}`;
    let id = this.valueIds.get(key);
    if (id === undefined) { id = this.values.push(value) - 1; this.valueIds.set(key, id); }
    return id;
  }

  private grow(rows: number): void {
    const more = <T extends Uint8Array | Uint16Array | Uint32Array | Float64Array>(a: T, per: number): T => {
      const b = new (a.constructor as new (n: number) => T)(rows * per);
      b.set(a);
      return b;
    };
    this.file = more(this.file, 1); this.offset = more(this.offset, 1); this.length = more(this.length, 1); this.sha = more(this.sha, SHA_BYTES);
    this.failed = more(this.failed, 1); if (this.hash) this.hash = more(this.hash, SHA_BYTES); this.hashed = more(this.hashed, 1); this.shared = more(this.shared, SHARED); this.numbers = more(this.numbers, NUMBERS);
  }
}

const SHARED = 9;
const NUMBERS = 9;
const HEX_SHA = /^[0-9a-f]{64}$/;

/** A start time as ms since the epoch when that gives back the same text (as toISOString wrote it); NaN otherwise. */
function startAsNumber(text: string | null): number {
  if (text === null) return NaN;
  const ms = Date.parse(text);
  return Number.isFinite(ms) && new Date(ms).toISOString() === text ? ms : NaN;
}
