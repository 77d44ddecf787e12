// A slice's rows of a secondary table (windows.parquet, cycles.parquet…) as columns: the numbers as float64 arrays, the
// recording, channel and unit as runs. A long recording's table travels as views of its stored entry, moved whole to the
// main thread, which cuts every part into Arrow record batches of a row group at most for the Parquet writer: no table
// is ever copied whole into one array, one IPC stream or the writer's memory.
import * as arrow from 'apache-arrow';
import { open } from 'node:fs/promises';
import { arrowSchema } from './arrow-schema.js';
import { TextColumn } from './arrow-columns.js';
import type { TableColumn } from './columns.js';
import { rowObjects, type SecondarySource } from '../reduce/result.js';
import { PackedRows } from '../../stages/packed-rows.js';

/** Rows a record batch holds at most (a Parquet row group's), and from which a recording's table travels as its own part. */
export const PART_ROWS = 65_536;

/** Consecutive rows of one recording, channel and unit. */
export interface TextRun { recording: string; channel: string; unit: string; count: number }

/**
 * Rows of a table as columns, one per float64 column of the table, in order (null for a column none of the rows has,
 * every value null): `values` in memory, or, for a long table, `offsets` of each column in the pack `file` (read a record
 * batch at a time). A value that is not finite is null.
 */
export interface RowsPart { length: number; runs: TextRun[]; values?: (Float64Array | null)[]; file?: string; offsets?: (number | null)[] }

/** The float64 columns of a table (the others are its recording, channel and unit). */
const numberColumns = (columns: TableColumn[]) => columns.filter((c) => c.type === 'float64');

/** A float64 array grown by doubling, given up at its length. */
class Growing {
  values = new Float64Array(1024);
  length = 0;
  room(n: number): void {
    if (this.values.length >= this.length + n) return;
    const g = new Float64Array(Math.max(2 * this.values.length, this.length + n));
    g.set(this.values.subarray(0, this.length));
    this.values = g;
  }
}

/**
 * A slice's rows of one table, gathered in table order: the rows of small tables copied into shared columns, a table of
 * PART_ROWS rows or more taken as it lies (views of its entry's memory, which `held` lists to move whole).
 */
export class RowsGather {
  readonly parts: RowsPart[] = [];
  readonly held = new Set<ArrayBuffer>();
  private readonly names: string[];
  private cols: Growing[];
  private runs: TextRun[] = [];
  private length = 0;

  constructor(columns: TableColumn[]) {
    this.names = numberColumns(columns).map((c) => c.name);
    this.cols = this.names.map(() => new Growing());
  }

  add(s: SecondarySource): void {
    const p = s.rows;
    if (Array.isArray(p)) { for (const row of rowObjects(s)) this.addObject(row); return; }
    const index = this.names.map((n) => p.names.indexOf(n));
    const runs: TextRun[] = [];
    for (let r = 0; r < p.runs.length; r += 2) runs.push({ recording: s.recording, channel: s.channels[p.runs[r]].name, unit: s.channels[p.runs[r]].unit, count: p.runs[r + 1] });
    if (!(p instanceof PackedRows)) {
      // Left in its pack: the main thread reads it a record batch at a time.
      this.flush();
      this.parts.push({ length: p.length, runs, file: p.file, offsets: index.map((k) => (k >= 0 ? p.at + k * p.length * 8 : null)) });
      return;
    }
    if (p.length >= PART_ROWS) {
      this.flush();
      const values = index.map((k) => (k >= 0 ? p.column(k) : null));
      for (const v of values) if (v) this.held.add(v.buffer as ArrayBuffer);
      this.parts.push({ length: p.length, values, runs });
      return;
    }
    for (let j = 0; j < index.length; j++) {
      const g = this.cols[j];
      g.room(p.length);
      if (index[j] >= 0) g.values.set(p.column(index[j]), this.length); else g.values.fill(NaN, this.length, this.length + p.length);
      g.length = this.length + p.length;
    }
    for (const r of runs) this.run(r.recording, r.channel, r.unit, r.count);
    this.length += p.length;
  }

  /** The parts, in order. */
  done(): RowsPart[] {
    this.flush();
    return this.parts;
  }

  /** A row of an entry stored before tables were packed. */
  private addObject(row: Record<string, string | number | null>): void {
    for (let j = 0; j < this.names.length; j++) {
      const g = this.cols[j], v = row[this.names[j]];
      g.room(1);
      g.values[this.length] = typeof v === 'number' ? v : NaN;
      g.length = this.length + 1;
    }
    this.run(String(row.recording), String(row.channel), String(row.unit), 1);
    this.length++;
  }

  private run(recording: string, channel: string, unit: string, count: number): void {
    const last = this.runs.at(-1);
    if (last && last.recording === recording && last.channel === channel && last.unit === unit) last.count += count;
    else this.runs.push({ recording, channel, unit, count });
  }

  /** The rows gathered so far as a part of their own (exact copies, so each array's memory is its own to move). */
  private flush(): void {
    if (!this.length) return;
    const values = this.cols.map((g) => g.values.slice(0, this.length));
    for (const v of values) this.held.add(v.buffer as ArrayBuffer);
    this.parts.push({ length: this.length, values, runs: this.runs });
    this.cols = this.names.map(() => new Growing());
    this.runs = [];
    this.length = 0;
  }
}

/** A float64 column of a record batch, viewing its part's values; a value that is not finite is null, or 0 where the column allows none. */
function numberData(values: Float64Array, nullable: boolean): arrow.Data {
  let bits: Uint8Array | undefined, nulls = 0, data = values;
  for (let i = 0; i < values.length; i++) {
    const x = values[i];
    if (x - x === 0) continue;
    if (!nullable) { if (data === values) data = values.slice(); data[i] = 0; continue; }
    bits ??= new Uint8Array((values.length + 7) >> 3).fill(0xff);
    bits[i >> 3] &= ~(1 << (i & 7));
    nulls++;
  }
  return arrow.makeData({ type: new arrow.Float64(), length: values.length, nullCount: nulls, nullBitmap: bits, data });
}

/**
 * The part's rows as Arrow IPC streams of PART_ROWS rows at most, one at a time (names and types only, as a slice's
 * tables); a part left in its pack is read a record batch at a time.
 */
export async function* partStreams(part: RowsPart, columns: TableColumn[], rows = PART_ROWS): AsyncGenerator<Uint8Array> {
  const fh = part.file ? await open(part.file, 'r') : null;
  // One buffer a column for every batch of the part: a batch's values are in its IPC stream once it is made.
  const buffers = new Map<number, Float64Array>();
  try {
    yield* batches(part, columns, rows, async (j, from, to) => {
      const at = part.offsets![j];
      if (at === null) return null;
      const v = (buffers.get(j) ?? buffers.set(j, new Float64Array(Math.min(rows, part.length))).get(j)!).subarray(0, to - from);
      const bytes = new Uint8Array(v.buffer, 0, v.byteLength);
      for (let got = 0, k = 1; got < bytes.length; got += k) {
        k = (await fh!.read(bytes, got, bytes.length - got, at + from * 8 + got)).bytesRead;
        if (k === 0) throw new Error(`${part.file}: ends inside a stored table's columns; run again with --force to recompute it`);
      }
      return v;
    });
  } finally {
    await fh?.close();
  }
}

async function* batches(part: RowsPart, columns: TableColumn[], rows: number, read: (j: number, from: number, to: number) => Promise<Float64Array | null>): AsyncGenerator<Uint8Array> {
  const schema = arrowSchema(columns, {}, false);
  const numbers = numberColumns(columns);
  let run = 0, left = part.runs[0]?.count ?? 0;
  for (let from = 0; from < part.length; from += rows) {
    const to = Math.min(part.length, from + rows), n = to - from;
    const text = { recording: new TextColumn(), channel: new TextColumn(), unit: new TextColumn() };
    for (let have = 0; have < n;) {
      while (left === 0) left = part.runs[++run].count;
      const take = Math.min(left, n - have), r = part.runs[run];
      text.recording.add(r.recording, take); text.channel.add(r.channel, take); text.unit.add(r.unit, take);
      have += take; left -= take;
    }
    const values = await Promise.all(numbers.map((_, j) => (part.values ? Promise.resolve(part.values[j]?.subarray(from, to) ?? null) : read(j, from, to))));
    const children = columns.map((c) => {
      if (c.type === 'string') return text[c.name as keyof typeof text].data();
      const v = values[numbers.indexOf(c)];
      return v ? numberData(v, c.nullable) : numberData(new Float64Array(n).fill(c.nullable ? NaN : 0), c.nullable);
    });
    const batch = new arrow.RecordBatch(schema, arrow.makeData({ type: new arrow.Struct(schema.fields), length: n, nullCount: 0, children }));
    yield arrow.tableToIPC(new arrow.Table(schema, [batch]), 'stream');
  }
}
