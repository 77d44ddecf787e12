// Feature rows → an Arrow table → Parquet (Apache Arrow's Rust writer, compiled to WebAssembly), written atomically.
import * as arrow from 'apache-arrow';
import { Compression, Table as WasmTable, writeParquet, WriterPropertiesBuilder, type WriterProperties } from 'parquet-wasm/node';
import { writeFileAtomic } from './atomic.js';
import type { FeatureRow } from '../reduce/result.js';

import type { TableColumn } from './columns.js';

export { IDENTITY_COLUMNS, QUALITY_COLUMNS, type ColumnType, type TableColumn } from './columns.js';

const ARROW_TYPES = {
  string: () => new arrow.Utf8(),
  float64: () => new arrow.Float64(),
  int64: () => new arrow.Int64(),
  timestamp_ms: () => new arrow.TimestampMillisecond(),
} as const;

/** A float64 column gathered as it comes: values and validity bits in typed arrays. */
class NumberColumn {
  values = new Float64Array(256);
  valid = new Uint8Array(32);
  nulls = 0;
  add(i: number, v: number | null, nullable: boolean): void {
    if (i >= this.values.length) {
      const values = new Float64Array(2 * this.values.length); values.set(this.values); this.values = values;
      const valid = new Uint8Array(values.length >> 3); valid.set(this.valid); this.valid = valid;
    }
    // A missing value of a column that allows none is 0, as a Float64Array makes it.
    if (v == null && nullable) { this.nulls++; return; }
    this.values[i] = v as number;
    this.valid[i >> 3] |= 1 << (i & 7);
  }
  data(length: number, nullable: boolean): arrow.Data {
    const data = this.values.slice(0, length);
    return nullable && this.nulls
      ? arrow.makeData({ type: new arrow.Float64(), length, nullCount: this.nulls, nullBitmap: this.valid.slice(0, (length + 7) >> 3), data })
      : arrow.makeData({ type: new arrow.Float64(), length, nullCount: 0, data });
  }
}

/** Rows gathered column by column as they are added (numbers straight into typed arrays), then made into an Arrow table. */
export class TableRows {
  private numbers: (NumberColumn | null)[];
  private others: ((string | number | null)[] | null)[];
  length = 0;
  constructor(readonly columns: TableColumn[]) {
    this.numbers = columns.map((c) => (c.type === 'float64' ? new NumberColumn() : null));
    this.others = columns.map((c) => (c.type === 'float64' ? null : []));
  }

  add(row: FeatureRow): void {
    const i = this.length++;
    this.columns.forEach((c, k) => {
      const v = row[c.name] ?? null;
      if (this.numbers[k]) this.numbers[k]!.add(i, v as number | null, c.nullable);
      else this.others[k]!.push(v);
    });
  }

  table(metadata: Record<string, string>): arrow.Table {
    const fields = this.columns.map((c) => new arrow.Field(c.name, ARROW_TYPES[c.type](), c.nullable, new Map([['unit', c.unit], ['description', c.description]])));
    const schema = new arrow.Schema(fields, new Map(Object.entries(metadata)));
    const children = this.columns.map((c, k) => {
      if (this.numbers[k]) return this.numbers[k]!.data(this.length, c.nullable);
      const values = this.others[k]!;
      const vector = c.type === 'int64'
        ? arrow.vectorFromArray(values.map((v) => (v == null ? null : BigInt(v as number))), new arrow.Int64())
        : arrow.vectorFromArray(values as never[], ARROW_TYPES[c.type]());
      return vector.data[0] ?? arrow.makeData({ type: ARROW_TYPES[c.type](), length: 0, nullCount: 0 });
    });
    const batch = new arrow.RecordBatch(schema, arrow.makeData({ type: new arrow.Struct(fields), length: this.length, nullCount: 0, children }));
    return new arrow.Table(schema, [batch]);
  }
}

export function toArrowTable(columns: TableColumn[], rows: FeatureRow[], metadata: Record<string, string>): arrow.Table {
  const gathered = new TableRows(columns);
  for (const r of rows) gathered.add(r);
  return gathered.table(metadata);
}

/** Writes the rows as Parquet, zstd-compressed, with column statistics; metadata goes in the footer's key-value pairs. */
export async function writeParquetTable(path: string, columns: TableColumn[], rows: FeatureRow[], metadata: Record<string, string>): Promise<void> {
  const table = toArrowTable(columns, rows, metadata);
  const bytes = writeParquet(WasmTable.fromIPCStream(arrow.tableToIPC(table, 'stream')), writerProperties(columns, metadata));
  await writeFileAtomic(path, bytes);
}

/** Zstandard, the metadata in the footer's key-value pairs with the columns' units as `quern.units`. */
export function writerProperties(columns: TableColumn[], metadata: Record<string, string>): WriterProperties {
  const units = Object.fromEntries(columns.map((c) => [c.name, c.unit]));
  const kv = new Map([...Object.entries(metadata), ['quern.units', JSON.stringify(units)]]);
  return new WriterPropertiesBuilder().setCompression(Compression.ZSTD).setKeyValueMetadata(kv).setCreatedBy(metadata['quern.version'] ? `quern ${metadata['quern.version']}` : 'quern').build();
}
