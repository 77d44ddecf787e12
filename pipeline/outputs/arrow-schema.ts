// A table's Arrow schema and column types, apart from the Parquet writer, so that the worker threads (which gather
// Arrow columns) never load the writer's WebAssembly.
import * as arrow from 'apache-arrow';
import type { TableColumn } from './columns.js';

export const ARROW_TYPES = {
  string: () => new arrow.Utf8(),
  float64: () => new arrow.Float64(),
  int64: () => new arrow.Int64(),
  timestamp_ms: () => new arrow.TimestampMillisecond(),
} as const;

/** The Arrow schema of a table: each field with its unit and description, the metadata on the schema. */
export function arrowSchema(columns: TableColumn[], metadata: Record<string, string>): arrow.Schema {
  const fields = columns.map((c) => new arrow.Field(c.name, ARROW_TYPES[c.type](), c.nullable, new Map([['unit', c.unit], ['description', c.description]])));
  return new arrow.Schema(fields, new Map(Object.entries(metadata)));
}
