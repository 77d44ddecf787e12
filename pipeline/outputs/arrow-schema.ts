// A table's Arrow schema and column types, apart from the Parquet writer, so that the worker threads (which gather
// Arrow columns) never load the writer's WebAssembly.
import * as arrow from 'apache-arrow';
import type { TableColumn } from './columns.js';

export const ARROW_TYPES = {
  string: () => new arrow.Utf8(),
  float64: () => new arrow.Float64(),
  int64: () => new arrow.Int64(),
  // Instants, not wall-clock readings: with a zone, Parquet marks them adjusted to UTC (isAdjustedToUTC), as the columns' unit says.
  timestamp_ms_utc: () => new arrow.TimestampMillisecond('UTC'),
} as const;

/**
 * The Arrow schema of a table: each field with its unit and description, the metadata on the schema. Without `described`,
 * names, types and nullability only: for the batches of a table whose writer already holds the described schema.
 */
export function arrowSchema(columns: TableColumn[], metadata: Record<string, string>, described = true): arrow.Schema {
  const fields = columns.map((c) => new arrow.Field(c.name, ARROW_TYPES[c.type](), c.nullable, described ? new Map([['unit', c.unit], ['description', c.description]]) : undefined));
  return new arrow.Schema(fields, described ? new Map(Object.entries(metadata)) : undefined);
}
