// Tables whose rows are made while writing (trends.parquet, spectra.parquet): batches of rows streamed through the run's
// Parquet writer into a staged file, so memory holds one batch whatever the number of rows.
import * as arrow from 'apache-arrow';
import { toArrowTable, type TableColumn } from '../outputs/parquet.js';
import { ParquetStream } from '../outputs/parquet-stream.js';
import type { StagedFile } from '../outputs/staged.js';
import type { FeatureRow } from '../reduce/result.js';

/** Rows a batch holds before it goes to the writer. */
export const BATCH_ROWS = 65536;

/** Writes the batches as one Parquet table into the staged file (closed, not yet in place); returns the number of rows. */
export async function writeStreamedTable(file: StagedFile, columns: TableColumn[], batches: AsyncIterable<FeatureRow[]>, metadata: Record<string, string>): Promise<number> {
  const table = new ParquetStream(file, columns, metadata);
  for await (const rows of batches) if (rows.length) await table.push(arrow.tableToIPC(toArrowTable(columns, rows, metadata), 'stream'));
  await table.finish();
  return table.rows;
}

/** Groups rows into batches of BATCH_ROWS. */
export async function* batched(rows: AsyncIterable<FeatureRow> | Iterable<FeatureRow>): AsyncGenerator<FeatureRow[]> {
  let batch: FeatureRow[] = [];
  for await (const r of rows) {
    batch.push(r);
    if (batch.length === BATCH_ROWS) { yield batch; batch = []; }
  }
  if (batch.length) yield batch;
}
