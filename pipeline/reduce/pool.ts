// The run's worker threads: batches of recordings to reduce, then slices of the tables to assemble, on one pool.
import { availableParallelism } from 'node:os';
import { existsSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { Tinypool } from 'tinypool';
import { packageRoot } from '../declare/package-files.js';
import { encodeRecord } from '../store/record.js';
import type { BatchItem, BatchResult } from './batch.js';

/** The compiled worker; run from TypeScript source (the tests), the build in dist/ serves, as `npm test` builds first. */
function workerFile(): string {
  const here = fileURLToPath(import.meta.url);
  const built = here.endsWith('.ts') ? join(packageRoot, 'dist', 'pipeline', 'reduce', 'worker.js') : join(dirname(here), 'worker.js');
  if (!existsSync(built)) throw new Error(`quern: worker code ${built} is missing; run "npm run build" first`);
  return pathToFileURL(built).href;
}

const YOUNG_GENERATION_MB = 16;

export interface Pool { threads: number; run<T>(task: string, input: unknown): Promise<T>; destroy(): Promise<void> }

export function openPool(threads = availableParallelism()): Pool {
  const n = Math.max(1, threads);
  let pool: Tinypool | null = null;
  // Threads start on the first task: a run with nothing to compute or write starts none.
  // A modest young generation: workers make short-lived garbage per recording, and collecting it often keeps memory flat.
  const get = () => (pool ??= new Tinypool({ filename: workerFile(), minThreads: n, maxThreads: n, resourceLimits: { maxYoungGenerationSizeMb: YOUNG_GENERATION_MB } }));
  return {
    threads: n,
    run: (name, input) => get().run(input, { name }),
    destroy: async () => { await pool?.destroy(); },
  };
}

/**
 * Up to `maxFiles` recordings or `maxBytes` of them a batch, largest first, so the pool ends evenly; never fewer than
 * `perThread` batches a thread while there are recordings enough, so small archives still use every thread.
 */
export function formBatches<T extends { store: { identity: { size: number } } }>(items: T[], { threads = 1, perThread = 4, maxFiles = 64, maxBytes = 4 << 20 } = {}): T[][] {
  const total = items.reduce((s, it) => s + it.store.identity.size, 0);
  maxFiles = Math.max(1, Math.min(maxFiles, Math.ceil(items.length / (threads * perThread))));
  maxBytes = Math.max(1, Math.min(maxBytes, Math.ceil(total / (threads * perThread))));
  const sorted = [...items].sort((a, b) => b.store.identity.size - a.store.identity.size);
  const out: T[][] = [];
  let current: T[] = [], bytes = 0;
  for (const it of sorted) {
    if (current.length && (current.length >= maxFiles || bytes + it.store.identity.size > maxBytes)) { out.push(current); current = []; bytes = 0; }
    current.push(it);
    bytes += it.store.identity.size;
  }
  if (current.length) out.push(current);
  return out;
}

export interface ReduceOptions {
  /** Called with each finished batch, in the order they finish (store them, report progress). */
  onBatch: (results: BatchResult[], items: BatchItem[]) => Promise<void>;
}

/** Reduces every item in batches; a worker that dies fails only the recordings of its batch. */
export async function reduceAll(pool: Pool, items: BatchItem[], { onBatch }: ReduceOptions): Promise<void> {
  let failure: unknown = null;
  await Promise.all(formBatches(items, { threads: pool.threads }).map(async (batch) => {
    let results: BatchResult[];
    try {
      results = await pool.run<BatchResult[]>('reduceBatch', batch);
    } catch (e) {
      // Out of memory or a native crash: each recording of the batch alone, so one bad file sinks no other.
      results = [];
      for (const item of batch) {
        try { results.push(...await pool.run<BatchResult[]>('reduceBatch', [item])); } catch (e1) { results.push(workerStopped(item, e1 as Error)); }
      }
    }
    if (failure) return;
    try { await onBatch(results, batch); } catch (e) { failure ??= e; }
  }));
  if (failure) throw failure;
}

/** The record of a recording whose worker stopped. */
function workerStopped(item: BatchItem, e: Error): BatchResult {
  const s = item.store;
  const facts = {
    recording: item.job.recording, group: item.job.group, status: 'failed' as const, reason: `worker stopped: ${e.message}`, version: s.version, identity: s.identity,
    readAtMs: s.readAtMs, declKey: s.declKey, groupKeys: {}, failureKey: s.specHash, seconds: 0, frames: 0, sampleRate: null, startTime: null, channels: 0, notes: { '': [] }, storedAt: Date.now(),
  };
  return { facts, bytes: encodeRecord(facts, { recording: facts.recording, group: facts.group, status: 'failed', reason: facts.reason, base: null, groups: {} }) };
}
