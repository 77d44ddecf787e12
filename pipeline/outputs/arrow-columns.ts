// Arrow columns filled straight from typed arrays and repeated values, with no object per row: for tables of many rows
// made while writing (spectra.parquet, trends.parquet). The table comes out as toArrowTable would make it from rows.
import * as arrow from 'apache-arrow';
import { ARROW_TYPES, arrowSchema } from './arrow-schema.js';
import type { TableColumn } from './columns.js';

const utf8 = new TextEncoder();

/** Validity bits (Arrow's LSB-first bitmap), grown with the column; null until the first null. */
class Validity {
  bits: Uint8Array | null = null;
  nulls = 0;
  mark(from: number, to: number, valid: boolean, capacity: number): void {
    if (valid && !this.bits) return;
    if (!this.bits) this.bits = new Uint8Array(Math.ceil(capacity / 8)).fill(0xff);
    else if (this.bits.length * 8 < capacity) { const b = new Uint8Array(Math.ceil(capacity / 8)).fill(0xff); b.set(this.bits); this.bits = b; }
    for (let i = from; i < to; i++) if (valid) this.bits[i >> 3] |= 1 << (i & 7); else this.bits[i >> 3] &= ~(1 << (i & 7));
    if (!valid) this.nulls += to - from;
  }
  /** The bitmap for `length` values, or none when every value is valid. */
  take(length: number): Uint8Array | undefined {
    return this.bits && this.nulls ? this.bits.slice(0, Math.ceil(length / 8)) : undefined;
  }
}

/** A column of text: UTF-8 bytes and offsets; a value added many times at once is encoded once. */
export class TextColumn {
  length = 0;
  private bytes = new Uint8Array(1024);
  private offsets = new Int32Array(1025);
  private end = 0;
  private readonly validity = new Validity();
  private last: string | null = null;
  private lastBytes = new Uint8Array(0);

  add(value: string | null, times = 1): void {
    if (times <= 0) return;
    const from = this.length, to = from + times;
    if (this.offsets.length < to + 1) { const o = new Int32Array(Math.max(2 * this.offsets.length, to + 1)); o.set(this.offsets); this.offsets = o; }
    this.validity.mark(from, to, value != null, this.offsets.length);
    const b = value == null ? null : value === this.last ? this.lastBytes : (this.last = value, this.lastBytes = utf8.encode(value));
    const need = this.end + (b ? b.length * times : 0);
    if (this.bytes.length < need) { const g = new Uint8Array(Math.max(2 * this.bytes.length, need)); g.set(this.bytes.subarray(0, this.end)); this.bytes = g; }
    const size = b ? b.length : 0, start = this.end;
    for (let i = from; i < to; i++) this.offsets[i + 1] = start + (i + 1 - from) * size;
    // The value once, then the copied run doubled until it covers every repeat: a few large copies, not one per row.
    if (b && size) {
      this.bytes.set(b, start);
      for (let have = size, want = size * times; have < want; have *= 2) this.bytes.copyWithin(start + have, start, start + Math.min(have, want - have));
    }
    this.end = start + size * times;
    this.length = to;
  }

  data(): arrow.Data {
    return arrow.makeData({ type: new arrow.Utf8(), length: this.length, nullCount: this.validity.nulls, nullBitmap: this.validity.take(this.length), valueOffsets: this.offsets.slice(0, this.length + 1), data: this.bytes.slice(0, this.end) });
  }
}

/** A column of float64 (or, with `timestamp_ms_utc`, milliseconds since the epoch, UTC), nullable; whole arrays added at once. */
export class NumberColumn {
  length = 0;
  private values = new Float64Array(1024);
  private readonly validity = new Validity();
  constructor(private readonly kind: 'float64' | 'timestamp_ms_utc' = 'float64') {}

  private room(n: number): void {
    if (this.values.length < this.length + n) { const g = new Float64Array(Math.max(2 * this.values.length, this.length + n)); g.set(this.values.subarray(0, this.length)); this.values = g; }
  }

  add(value: number | null, times = 1): void {
    if (times <= 0) return;
    this.room(times);
    this.values.fill(value ?? 0, this.length, this.length + times);
    this.validity.mark(this.length, this.length + times, value != null, this.values.length);
    this.length += times;
  }

  /** Every value of a typed array (a Float32Array's values exactly, as doubles). */
  addAll(values: Float64Array | Float32Array): void {
    this.room(values.length);
    this.values.set(values, this.length);
    this.validity.mark(this.length, this.length + values.length, true, this.values.length);
    this.length += values.length;
  }

  /** k · step for k = 0 … count − 1 (bin frequencies). */
  addRamp(count: number, step: number): void {
    this.room(count);
    for (let k = 0; k < count; k++) this.values[this.length + k] = k * step;
    this.validity.mark(this.length, this.length + count, true, this.values.length);
    this.length += count;
  }

  data(): arrow.Data {
    const nullBitmap = this.validity.take(this.length), nullCount = this.validity.nulls;
    if (this.kind === 'float64') return arrow.makeData({ type: new arrow.Float64(), length: this.length, nullCount, nullBitmap, data: this.values.slice(0, this.length) });
    const ms = new BigInt64Array(this.length);
    for (let i = 0; i < this.length; i++) ms[i] = BigInt(this.values[i]);
    return arrow.makeData({ type: ARROW_TYPES.timestamp_ms_utc(), length: this.length, nullCount, nullBitmap, data: ms });
  }
}

export type Column = TextColumn | NumberColumn;

/** Empty columns for a table's declared columns, by name. */
export function columnsFor(columns: TableColumn[]): Record<string, Column> {
  return Object.fromEntries(columns.map((c) => {
    if (c.type === 'string') return [c.name, new TextColumn()];
    if (c.type === 'float64' || c.type === 'timestamp_ms_utc') return [c.name, new NumberColumn(c.type)];
    throw new Error(`column ${c.name}: ${c.type} columns are not built from arrays`);
  }));
}

/** The filled columns as one record batch of an Arrow table with the table's schema (as toArrowTable makes it). */
export function columnsTable(columns: TableColumn[], built: Record<string, Column>, metadata: Record<string, string>, described = true): arrow.Table {
  const schema = arrowSchema(columns, metadata, described);
  const length = built[columns[0].name].length;
  const children = columns.map((c) => {
    const d = built[c.name];
    if (d.length !== length) throw new Error(`column ${c.name} holds ${d.length} values, not ${length}`);
    return d.data();
  });
  return new arrow.Table(schema, [new arrow.RecordBatch(schema, arrow.makeData({ type: new arrow.Struct(schema.fields), length, nullCount: 0, children }))]);
}
