// Tables whose rows are made while writing (trends.parquet, spectra.parquet): record batches streamed through the Parquet
// writer, so memory holds one batch whatever the number of rows; the file appears whole or not at all.
import * as arrow from 'apache-arrow';
import { Table as WasmTable, transformParquetStream } from 'parquet-wasm/node';
import { writeFileAtomic } from '../outputs/atomic.js';
import { toArrowTable, writerProperties, type TableColumn } from '../outputs/parquet.js';
import type { FeatureRow } from '../reduce/result.js';

/** Rows a batch holds before it goes to the writer. */
export const BATCH_ROWS = 65536;

/** Writes the batches as one Parquet file (one row group a batch); returns the number of rows. */
export async function writeStreamedTable(path: string, columns: TableColumn[], batches: AsyncIterable<FeatureRow[]> | Iterable<FeatureRow[]>, metadata: Record<string, string>): Promise<number> {
  const it = (Symbol.asyncIterator in batches ? batches[Symbol.asyncIterator]() : (batches as Iterable<FeatureRow[]>)[Symbol.iterator]()) as AsyncIterator<FeatureRow[]> | Iterator<FeatureRow[]>;
  let rows = 0, sent = false;
  const toWasm = (rowsOf: FeatureRow[]) => WasmTable.fromIPCStream(arrow.tableToIPC(toArrowTable(columns, rowsOf, metadata), 'stream')).recordBatches();
  const stream = new ReadableStream({
    async pull(controller) {
      const next = await it.next();
      if (next.done) {
        // A table with no rows still carries its schema.
        if (!sent) for (const b of toWasm([])) controller.enqueue(b);
        controller.close();
        return;
      }
      if (!next.value.length) return;
      rows += next.value.length;
      sent = true;
      for (const b of toWasm(next.value)) controller.enqueue(b);
    },
  });
  const bytes = await transformParquetStream(stream, writerProperties(columns, metadata));
  await writeFileAtomic(path, bytes as unknown as AsyncIterable<Uint8Array>);
  return rows;
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
