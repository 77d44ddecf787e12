// Worker-thread entry: batches of recordings to reduce, slices of the tables to assemble, pictures to fetch. Their bytes
// move to the main thread rather than being copied: nothing is left behind in either heap.
import { Tinypool } from 'tinypool';
import type { Candidate, SliceOutput, SliceTask } from '../outputs/slice.js';
import { batchBuffers, reduceBatch as reduce, type BatchItem, type BatchResult } from './batch.js';

/** The table code (Arrow) loads when a first slice is asked for, not while a thread starts to reduce. */
const tables = () => import('../outputs/slice.js');

const moved = <T>(value: T, buffers: ArrayBuffer[]): T =>
  Tinypool.move({ [Tinypool.transferableSymbol]: buffers, [Tinypool.valueSymbol]: value } as unknown as Parameters<typeof Tinypool.move>[0]) as unknown as T;

export async function reduceBatch(items: BatchItem[]): Promise<BatchResult[]> {
  const out = await reduce(items);
  // Every run that reduces writes tables next: their code loads once this batch has gone, while the main thread stores it.
  if (items.length) setImmediate(() => { tables().catch(() => {}); });
  return moved(out, batchBuffers(out));
}

export async function assembleSlice(task: SliceTask): Promise<SliceOutput> {
  const { assembleSlice: assemble, sliceBuffers } = await tables();
  const out = await assemble(task);
  return moved(out, sliceBuffers(out));
}

export async function picturesOf(candidates: Candidate[]): Promise<(string[] | null)[]> {
  return (await tables()).picturesOf(candidates);
}
