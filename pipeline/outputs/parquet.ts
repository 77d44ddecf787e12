// Feature rows → an Arrow table → Parquet (Apache Arrow's Rust writer, compiled to WebAssembly), written atomically.
import type * as Arrow from 'apache-arrow';
import type * as ParquetWasm from 'parquet-wasm/node';
import type { ColumnSpec } from '../../stages/stage.js';
import { writeFileAtomic } from './atomic.js';
import type { FeatureRow } from '../reduce/result.js';

export type ColumnType = 'string' | 'float64' | 'int64' | 'timestamp_ms';

export interface TableColumn extends ColumnSpec { type: ColumnType; nullable: boolean }

/** The identifying columns every features.parquet row starts with. */
export const IDENTITY_COLUMNS: TableColumn[] = [
  { name: 'recording', type: 'string', nullable: false, unit: '', description: 'Path of the recording relative to the archive root.' },
  { name: 'group', type: 'string', nullable: false, unit: '', description: 'Declaration group the recording belongs to.' },
  { name: 'channel', type: 'string', nullable: false, unit: '', description: 'Channel name.' },
  { name: 'quantity', type: 'string', nullable: false, unit: '', description: 'Measured quantity as declared.' },
  { name: 'unit', type: 'string', nullable: false, unit: '', description: 'Engineering unit of the channel; columns whose unit is "[unit]" are in it.' },
  { name: 'sample_rate', type: 'float64', nullable: false, unit: 'Hz', description: 'Samples per second per channel.' },
  { name: 'n', type: 'int64', nullable: false, unit: '1', description: 'Samples (frames) in the recording.' },
  { name: 'duration_s', type: 'float64', nullable: false, unit: 's', description: 'n / sample_rate.' },
  { name: 'start_time', type: 'timestamp_ms', nullable: true, unit: 'UTC', description: 'Start of the capture (Broadcast Wave bext origination, or CSV date-time); null when unknown.' },
];

/** The verdict columns that follow the identity and label columns. */
export const QUALITY_COLUMNS: TableColumn[] = [
  { name: 'quality', type: 'string', nullable: false, unit: '', description: 'Worst severity of the channel\'s flags: ok, warn or fail.' },
  { name: 'flags', type: 'string', nullable: false, unit: '', description: 'Comma-separated names of the flags that are not ok.' },
];

// Apache Arrow and parquet-wasm take about a fifth of a second to load: loaded on first use, or early by a run
// (loadParquetWriter) so that they load while the recordings are reduced.
let arrow: typeof Arrow;
let parquet: typeof ParquetWasm;
let loading: Promise<void> | null = null;
export function loadParquetWriter(): Promise<void> {
  return (loading ??= Promise.all([import('apache-arrow'), import('parquet-wasm/node')]).then(([a, p]) => { arrow = a; parquet = p; }));
}

const ARROW_TYPES = {
  string: () => new arrow.Utf8(),
  float64: () => new arrow.Float64(),
  int64: () => new arrow.Int64(),
  timestamp_ms: () => new arrow.TimestampMillisecond(),
} as const;

function vectorOf(col: TableColumn, rows: FeatureRow[]): Arrow.Vector {
  const values = rows.map((r) => r[col.name] ?? null);
  if (col.type === 'int64') return arrow.vectorFromArray(values.map((v) => (v == null ? null : BigInt(v as number))), new arrow.Int64());
  if (col.type === 'float64' && !col.nullable) return arrow.makeVector(Float64Array.from(values as number[]));
  return arrow.vectorFromArray(values as never[], ARROW_TYPES[col.type]());
}

/** The rows as an Arrow table (after loadParquetWriter). */
export function toArrowTable(columns: TableColumn[], rows: FeatureRow[], metadata: Record<string, string>): Arrow.Table {
  const fields = columns.map((c) => new arrow.Field(c.name, ARROW_TYPES[c.type](), c.nullable, new Map([['unit', c.unit], ['description', c.description]])));
  const schema = new arrow.Schema(fields, new Map(Object.entries(metadata)));
  const data = Object.fromEntries(columns.map((c) => [c.name, vectorOf(c, rows).data[0] ?? arrow.makeData({ type: ARROW_TYPES[c.type](), length: 0, nullCount: 0 })]));
  const batch = new arrow.RecordBatch(schema, arrow.makeData({ type: new arrow.Struct(fields), length: rows.length, nullCount: 0, children: columns.map((c) => data[c.name]) }));
  return new arrow.Table(schema, [batch]);
}

/** Writes the rows as Parquet, zstd-compressed, with column statistics; metadata goes in the footer's key-value pairs. */
export async function writeParquetTable(path: string, columns: TableColumn[], rows: FeatureRow[], metadata: Record<string, string>): Promise<void> {
  await loadParquetWriter();
  const { Compression, Table: WasmTable, writeParquet, WriterPropertiesBuilder } = parquet;
  const table = toArrowTable(columns, rows, metadata);
  const units = Object.fromEntries(columns.map((c) => [c.name, c.unit]));
  const kv = new Map([...Object.entries(metadata), ['quern.units', JSON.stringify(units)]]);
  const props = new WriterPropertiesBuilder().setCompression(Compression.ZSTD).setKeyValueMetadata(kv).setCreatedBy(metadata['quern.version'] ? `quern ${metadata['quern.version']}` : 'quern').build();
  const bytes = writeParquet(WasmTable.fromIPCStream(arrow.tableToIPC(table, 'stream')), props);
  await writeFileAtomic(path, bytes);
}
