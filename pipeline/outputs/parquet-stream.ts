// A Parquet table written as it arrives: Arrow record batches in, row groups out to a staged file, never the whole table in memory.
import * as arrow from 'apache-arrow';
import type { RecordBatch } from 'parquet-wasm/node';
import { parquetWasm } from './parquet-wasm.js';
import { toArrowTable, writerProperties, type TableColumn } from './parquet.js';
import type { StagedFile } from './staged.js';

/** Rows a row group holds at most: readers skip whole row groups by their statistics. */
export const ROW_GROUP_ROWS = 65_536;

/**
 * The record batches of an Arrow IPC stream, in the writer's WebAssembly memory. The table that held them is freed at
 * once: left to the collector's finalisers, a hundred thousand small slices' tables kept the writer's memory growing.
 */
function batchesOf(ipc: Uint8Array): RecordBatch[] {
  const table = parquetWasm().Table.fromIPCStream(ipc);
  try {
    return table.recordBatches();
  } finally {
    table.free();
  }
}

export class ParquetStream {
  private waiting: ((b: RecordBatch | null) => void) | null = null;
  private queue: (RecordBatch | null)[] = [];
  private drained: (() => void) | null = null;
  private done: Promise<void>;
  rows = 0;

  constructor(readonly file: StagedFile, columns: TableColumn[], metadata: Record<string, string>) {
    const props = writerProperties(columns, metadata, ROW_GROUP_ROWS);
    const source = new ReadableStream<RecordBatch>({
      pull: async (controller) => {
        const next = this.queue.length ? this.queue.shift()! : await new Promise<RecordBatch | null>((resolve) => { this.waiting = resolve; });
        if (!this.queue.length) { this.drained?.(); this.drained = null; }
        if (next) controller.enqueue(next); else controller.close();
      },
    }, { highWaterMark: 0 });
    this.done = (async () => {
      const reader = (await parquetWasm().transformParquetStream(source, props)).getReader();
      for (;;) {
        const { done, value } = await reader.read();
        if (done) break;
        await this.file.write(value as Uint8Array);
      }
    })();
    this.done.catch(() => {}); // awaited by push and finish; a failure must not also surface as unhandled
    // The schema travels with a batch: a first batch of no rows gives a table without rows its columns, and gives the
    // writer the described schema (units, descriptions, metadata) it keeps for the whole table; later batches may carry
    // names and types only (test/parquet-stream.test.ts holds this).
    this.offer(batchesOf(arrow.tableToIPC(toArrowTable(columns, [], metadata), 'stream')));
  }

  private offer(batches: (RecordBatch | null)[]): void {
    for (const b of batches) {
      if (this.waiting) { const w = this.waiting; this.waiting = null; w(b); } else this.queue.push(b);
    }
  }

  /** Adds the rows of an Arrow IPC stream; resolves once the writer has taken them (so memory stays bounded). */
  async push(ipc: Uint8Array): Promise<void> {
    // Empty batches are freed at once; the writer takes over the rest and frees them once written.
    const batches: RecordBatch[] = [];
    for (const b of batchesOf(ipc)) if (b.numRows > 0) batches.push(b); else b.free();
    this.rows += batches.reduce((s, b) => s + b.numRows, 0);
    this.offer(batches);
    if (this.queue.length) await Promise.race([new Promise<void>((r) => { this.drained = r; }), this.done]);
  }

  /** Ends the table (footer with the row groups' statistics) and closes the staged file. */
  async finish(): Promise<void> {
    this.offer([null]);
    await this.done;
    await this.file.close();
  }
}
