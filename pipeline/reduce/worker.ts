// Worker-thread entry: batches of recordings to reduce, slices of the tables to assemble, pictures to fetch. Their bytes
// move to the main thread rather than being copied: nothing is left behind in either heap.
import { Tinypool } from 'tinypool';
import { assembleSlice as assemble, sliceBuffers, type SliceOutput, type SliceTask } from '../outputs/slice.js';
import { batchBuffers, reduceBatch as reduce, type BatchItem, type BatchResult } from './batch.js';
export { picturesOf } from '../outputs/slice.js';

const moved = <T>(value: T, buffers: ArrayBuffer[]): T =>
  Tinypool.move({ [Tinypool.transferableSymbol]: buffers, [Tinypool.valueSymbol]: value } as unknown as Parameters<typeof Tinypool.move>[0]) as unknown as T;

export async function reduceBatch(items: BatchItem[]): Promise<BatchResult[]> {
  const out = await reduce(items);
  return moved(out, batchBuffers(out));
}

export async function assembleSlice(task: SliceTask): Promise<SliceOutput> {
  const out = await assemble(task);
  return moved(out, sliceBuffers(out));
}
