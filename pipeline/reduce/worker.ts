// Worker-thread entry: batches of recordings to reduce, slices of the tables to assemble, pictures to fetch. Their bytes
// move to the main thread rather than being copied: nothing is left behind in either heap.
import { Tinypool } from 'tinypool';
import type { Candidate, SliceOutput, SliceTask } from '../outputs/slice.js';
import { hdf5MemoryBytes, hdf5SetAside } from '../../stages/read/hdf5-library.js';
import { batchBuffers, reduceBatch as reduce, type BatchItem, type BatchReply } from './batch.js';
import type { Beats } from './stall-watch.js';

/** The table code (Arrow) loads when a first slice is asked for, not while a thread starts to reduce. */
const tables = () => import('../outputs/slice.js');

const moved = <T>(value: T, buffers: ArrayBuffer[]): T =>
  Tinypool.move({ [Tinypool.transferableSymbol]: buffers, [Tinypool.valueSymbol]: value } as unknown as Parameters<typeof Tinypool.move>[0]) as unknown as T;

/** HDF5 instances a thread may set aside (some 8 MB each, after files that stopped the library) before it asks to be replaced. */
export const RETIRE_AFTER_SET_ASIDE = 4;
/** The HDF5 library's memory in a thread above which it asks to be replaced: only the thread's end gives that memory back. */
export const RETIRE_ABOVE_HDF5_BYTES = 256 << 20;

/** Whether this thread holds memory only its end gives back, more than it should keep for the rest of the run. */
const spent = () => hdf5SetAside() >= RETIRE_AFTER_SET_ASIDE || hdf5MemoryBytes() > RETIRE_ABOVE_HDF5_BYTES;

/** A batch to reduce, and the beats the main thread watches for progress (none for a thread started ahead). */
export interface BatchTask { items: BatchItem[]; beats: Beats | null }

export async function reduceBatch({ items, beats }: BatchTask): Promise<BatchReply> {
  const out = await reduce(items, beats);
  // Every run that reduces writes tables next: their code loads once this batch has gone, while the main thread stores it.
  if (items.length) setImmediate(() => { tables().catch(() => {}); });
  return moved({ records: out, retire: spent() }, batchBuffers(out));
}

export async function assembleSlice(task: SliceTask): Promise<SliceOutput> {
  const { assembleSlice: assemble, sliceBuffers } = await tables();
  const out = await assemble(task);
  return moved(out, sliceBuffers(out));
}

export async function picturesOf(candidates: Candidate[]): Promise<(string[] | null)[]> {
  return (await tables()).picturesOf(candidates);
}
