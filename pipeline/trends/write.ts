// Tables whose rows are made while writing (trends.parquet): columns filled from typed arrays in batches,
// streamed through the run's Parquet writer into a staged file, so memory holds one batch whatever the number of rows.
import * as arrow from 'apache-arrow';
import { columnsFor, columnsTable, type Column } from '../outputs/arrow-columns.js';
import type { TableColumn } from '../outputs/parquet.js';
import { ParquetStream } from '../outputs/parquet-stream.js';
import type { StagedFile } from '../outputs/staged.js';

/** Rows a batch holds (at least) before it goes to the writer. */
export const BATCH_ROWS = 65536;

/** Writes the batches as one Parquet table into the staged file (closed, not yet in place); returns the number of rows. */
export async function writeStreamedTable(file: StagedFile, columns: TableColumn[], batches: AsyncIterable<arrow.Table> | Iterable<arrow.Table>, metadata: Record<string, string>): Promise<number> {
  const table = new ParquetStream(file, columns, metadata);
  for await (const batch of batches) if (batch.numRows) await table.push(arrow.tableToIPC(batch, 'stream'));
  await table.finish();
  return table.rows;
}

/** Batches of a table's columns, each item's rows added by `fill`; a batch goes out once it holds BATCH_ROWS rows or more. */
export async function* columnBatches<T>(columns: TableColumn[], metadata: Record<string, string>, items: AsyncIterable<T> | Iterable<T>,
  fill: (item: T, into: Record<string, Column>) => void): AsyncGenerator<arrow.Table> {
  let into = columnsFor(columns);
  const rows = () => into[columns[0].name].length;
  for await (const item of items) {
    fill(item, into);
    if (rows() >= BATCH_ROWS) { yield columnsTable(columns, into, metadata); into = columnsFor(columns); }
  }
  if (rows()) yield columnsTable(columns, into, metadata);
}
