// Memory moved here from a worker thread is given back as soon as its bytes are written, not when the collector next
// runs: until then the worker's allocator keeps it, and tens of megabytes of finished batches and slices piled up there.
import { MessageChannel } from 'node:worker_threads';

/**
 * Frees the memory of whole ArrayBuffers now (their views read as empty afterwards). Moving them into a message that is
 * never read detaches them; closing the channel drops the message, and its memory with it, on the next turn of the loop.
 * Only for buffers nothing else shares: never a slice of Node's shared Buffer pool.
 */
export function release(buffers: Iterable<ArrayBuffer>): void {
  const list = [...new Set(buffers)].filter((b) => b.byteLength > 0);
  if (!list.length) return;
  const { port1, port2 } = new MessageChannel();
  port1.postMessage(null, list);
  port1.close();
  port2.close();
}

/**
 * The ArrayBuffers these views fill from end to end between them (a worker's batch of records, a slice's pieces): memory
 * that belongs to them alone. A buffer they fill only in part (Node's shared pool of small Buffers) is never among them.
 */
export function ownBuffers(views: Iterable<Uint8Array | null | undefined>): ArrayBuffer[] {
  const spans = new Map<ArrayBuffer, [number, number][]>();
  for (const v of views) {
    if (!v || !v.byteLength || !(v.buffer instanceof ArrayBuffer)) continue;
    const list = spans.get(v.buffer) ?? spans.set(v.buffer, []).get(v.buffer)!;
    list.push([v.byteOffset, v.byteOffset + v.byteLength]);
  }
  const own: ArrayBuffer[] = [];
  for (const [buffer, list] of spans) {
    list.sort((a, b) => a[0] - b[0]);
    let end = 0;
    for (const [from, to] of list) { if (from > end) break; end = Math.max(end, to); }
    if (end === buffer.byteLength) own.push(buffer);
  }
  return own;
}

/**
 * The memory the tails of records lie in (the tables' column chunks, or a reused entry read back whole), each larger than
 * Node's pool of small Buffers and needed no more once its record is made: moved to the main thread, freed once written.
 */
export const tailBuffers = (records: { tail?: Uint8Array[] }[]): ArrayBuffer[] =>
  [...new Set(records.flatMap((r) => (r.tail ?? []).map((t) => t.buffer as ArrayBuffer)))].filter((b) => b.byteLength > Buffer.poolSize);
