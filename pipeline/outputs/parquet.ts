// Feature rows → an Arrow table, and the Parquet writer's properties (Apache Arrow's Rust writer, compiled to WebAssembly); ParquetStream writes them.
import * as arrow from 'apache-arrow';
import type { WriterProperties } from 'parquet-wasm/node';
import { parquetWasm } from './parquet-wasm.js';
import type { FeatureRow } from '../reduce/result.js';
import type { TableColumn } from './columns.js';
import { ARROW_TYPES, arrowSchema } from './arrow-schema.js';

export { IDENTITY_COLUMNS, QUALITY_COLUMNS, type ColumnType, type TableColumn } from './columns.js';
export { arrowSchema } from './arrow-schema.js';

function vectorOf(col: TableColumn, rows: FeatureRow[]): arrow.Vector {
  const values = rows.map((r) => r[col.name] ?? null);
  if (col.type === 'int64') return arrow.vectorFromArray(values.map((v) => (v == null ? null : BigInt(v as number))), new arrow.Int64());
  if (col.type === 'float64' && !col.nullable) return arrow.makeVector(Float64Array.from(values as number[]));
  return arrow.vectorFromArray(values as never[], ARROW_TYPES[col.type]());
}

export function toArrowTable(columns: TableColumn[], rows: FeatureRow[], metadata: Record<string, string>): arrow.Table {
  const schema = arrowSchema(columns, metadata), fields = schema.fields;
  const data = Object.fromEntries(columns.map((c) => [c.name, vectorOf(c, rows).data[0] ?? arrow.makeData({ type: ARROW_TYPES[c.type](), length: 0, nullCount: 0 })]));
  const batch = new arrow.RecordBatch(schema, arrow.makeData({ type: new arrow.Struct(fields), length: rows.length, nullCount: 0, children: columns.map((c) => data[c.name]) }));
  return new arrow.Table(schema, [batch]);
}

/**
 * Zstandard, the metadata in the footer's key-value pairs with the columns' units as `quern.units`; row groups of at most
 * `rowGroupRows`, when given. Float64 and text columns are written plain, without the writer's default dictionary:
 * measured values rarely repeat, so it hashed every value only to give the dictionary up, and even bin frequencies, which
 * repeat, came out five times larger as dictionary indices than as plain values under Zstandard; text (a recording's
 * name on each of its thousands of spectrum rows) Zstandard compresses as well plain, for a sixth less writing time.
 */
export function writerProperties(columns: TableColumn[], metadata: Record<string, string>, rowGroupRows?: number): WriterProperties {
  const units = Object.fromEntries(columns.map((c) => [c.name, c.unit]));
  const kv = new Map([...Object.entries(metadata), ['quern.units', JSON.stringify(units)]]);
  const { Compression, WriterPropertiesBuilder } = parquetWasm();
  let b = new WriterPropertiesBuilder().setCompression(Compression.ZSTD).setKeyValueMetadata(kv);
  for (const c of columns) if (c.type === 'float64' || c.type === 'string') b = b.setColumnDictionaryEnabled(c.name, false);
  return (rowGroupRows ? b.setMaxRowGroupSize(rowGroupRows) : b).setCreatedBy(metadata['quern.version'] ? `quern ${metadata['quern.version']}` : 'quern').build();
}
