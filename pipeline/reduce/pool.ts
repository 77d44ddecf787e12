// The run's worker threads: batches of recordings to reduce, then slices of the tables to assemble, on one pool.
import { availableParallelism } from 'node:os';
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { eachAtOnce } from '../at-once.js';
import type { Tinypool } from 'tinypool';
import { packageRoot } from '../declare/package-files.js';
import { settleWorkerCompiling, settleWorkerHeap } from '../engine-settings.js';
import { encodeRecord, NOT_TRIED, recordFacts, STALLED } from '../store/record.js';
import { ownBuffers, release, tailBuffers } from '../store/release.js';
import type { BatchItem, BatchReply, BatchResult, StoredRecord } from './batch.js';
import { newBeats, NoProgress, NotTried, Stalled, watchStall } from './stall-watch.js';
import { sweepStoppedThreads } from '../../stages/read/mat-spool.js';
import type { BatchTask } from './worker.js';

/** The compiled (and bundled) worker in dist/, whether this runs from TypeScript source (the tests, after `npm test` builds), from tsc's output or from the bundle's chunks. */
function workerFile(): string {
  const built = join(packageRoot, 'dist', 'pipeline', 'reduce', 'worker.js');
  if (!existsSync(built)) throw new Error(`quern: worker code ${built} is missing; run "npm run build" first`);
  return pathToFileURL(built).href;
}

const YOUNG_GENERATION_MB = 8;

export interface Pool {
  /** Threads the pool may use at most. */
  threads: number;
  /** Lets the pool start threads for up to `tasks` tasks at once (never more than `threads`). */
  widen(tasks: number): void;
  /**
   * Widens the pool for `tasks` and starts its threads now, so that they load their code before the work comes; resolves
   * once the pool has made them (they load on their own after that).
   */
  prestart(tasks: number): Promise<void>;
  /** Runs a task on a thread; aborting `signal` stops the thread (the pool starts another). */
  run<T>(task: string, input: unknown, signal?: AbortSignal): Promise<T>;
  /** Threads started so far. */
  started(): number;
  /** The ids of the threads running now. */
  threadIds(): number[];
  /** Replaces every thread, each once its task is done: for a thread that holds memory only its end gives back. */
  renew(): Promise<void>;
  destroy(): Promise<void>;
}

export function openPool(threads = availableParallelism()): Pool {
  const n = Math.max(1, threads);
  let pool: Tinypool | null = null;
  // Threads start on the first task: a run with nothing to compute or write starts none. One starts first, the others
  // when there is work for them: a small run does not spend a second core loading code it will not use.
  // A modest young generation: workers make short-lived garbage per recording, and collecting it often keeps memory flat.
  // Idle threads wait on their event loop, not blocked in Atomics.wait, so code they load ahead (the table code) loads then.
  // The pool's code (with Node's child-process, network and worker modules under it) loads with the first task: a re-run
  // with nothing to reduce never loads it.
  let width = 1;
  let made: Promise<Tinypool> | null = null;
  const get = () => (made ??= import('tinypool').then(({ Tinypool }) => (settleWorkerCompiling(n), settleWorkerHeap(), pool = new Tinypool({ filename: workerFile(), useAtomics: false, minThreads: width, maxThreads: width, resourceLimits: { maxYoungGenerationSizeMb: YOUNG_GENERATION_MB } }))));
  return {
    threads: n,
    widen: (tasks) => {
      width = Math.max(width, Math.min(n, tasks));
      // The pool reads its bounds at each task; as many kept as allowed, so an idle moment does not stop a thread.
      if (pool) { pool.options.maxThreads = width; pool.options.minThreads = width; }
    },
    async prestart(tasks) {
      this.widen(tasks);
      // As many empty batches at once as threads allowed: each one the pool cannot hand to a ready thread starts another.
      for (let i = 0; i < width; i++) get().then((p) => p.run({ items: [], beats: null } satisfies BatchTask, { name: 'reduceBatch' })).catch(() => {});
      await get().catch(() => {}); // a pool that cannot start says so at its first task
    },
    run: async (name, input, signal) => (await get()).run(input, { name, signal: signal ?? null }),
    started: () => pool?.threads.length ?? 0,
    threadIds: () => pool?.threads.map((t) => t.threadId) ?? [],
    renew: async () => { await pool?.recycleWorkers(); },
    // Safe to call again: the run stops its threads once the outputs are written, and again on its way out.
    destroy: async () => { const p = made; made = null; pool = null; await (await p?.catch(() => null))?.destroy(); },
  };
}

/**
 * Up to `maxFiles` recordings or `maxBytes` of them a batch, largest first, so the pool ends evenly; never fewer than
 * `perThread` batches a thread while there are recordings enough, so small archives still use every thread.
 */
export function formBatches<T>(items: T[], sizeOf: (item: T) => number, { threads = 1, perThread = 4, maxFiles = 64, maxBytes = 4 << 20 } = {}): T[][] {
  const total = items.reduce((s, it) => s + sizeOf(it), 0);
  maxFiles = Math.max(1, Math.min(maxFiles, Math.ceil(items.length / (threads * perThread))));
  maxBytes = Math.max(1, Math.min(maxBytes, Math.ceil(total / (threads * perThread))));
  const sorted = [...items].sort((a, b) => sizeOf(b) - sizeOf(a));
  const out: T[][] = [];
  let current: T[] = [], bytes = 0;
  for (const it of sorted) {
    if (current.length && (current.length >= maxFiles || bytes + sizeOf(it) > maxBytes)) { out.push(current); current = []; bytes = 0; }
    current.push(it);
    bytes += sizeOf(it);
  }
  if (current.length) out.push(current);
  return out;
}

export interface ReduceOptions<T> {
  /** A recording's size in bytes, to form batches. */
  sizeOf: (work: T) => number;
  /** The worker's job and storing facts of a recording, made when its batch goes out. */
  itemOf: (work: T) => BatchItem;
  /** Called with each finished batch, in the order they finish (store them, report progress). */
  onBatch: (results: StoredRecord[], work: T[]) => Promise<void>;
  /** A batch whose worker makes no progress for this long is stopped, and a recording that stalls alone fails. */
  stallMs?: number;
}

/** How long a recording may go without progress by default: far beyond any chunk's or channel's work. */
export const DEFAULT_STALL_MS = 300_000;

/** Batches given to the pool at once, a thread: enough that no thread waits for the next, few enough that memory stays flat. */
const BATCHES_IN_FLIGHT = 2;

/**
 * Recordings that stall one after another, none reduced between them, after which the run tries no more: a file system
 * that stopped answering would otherwise cost the stall limit for every recording left. Bad files scattered through an
 * archive have recordings reduced between them, and each only costs its own stall.
 */
export const STALLS_IN_A_ROW = 3;

/**
 * Reduces every recording in batches; a worker that dies or stalls fails only the recordings of its batch. Returns the
 * threads given up for a stall (one may still be waiting on storage when the run ends).
 */
export async function reduceAll<T>(pool: Pool, work: T[], { sizeOf, itemOf, onBatch, stallMs = DEFAULT_STALL_MS }: ReduceOptions<T>): Promise<{ threadsGivenUp: number }> {
  let failure: unknown = null;
  let stallsInARow = 0, threadsGivenUp = 0;
  const notTried = () => new NotTried(stallsInARow, stallMs);
  const batches = formBatches(work, sizeOf, { threads: pool.threads });
  pool.widen(batches.length);
  const one = async (batch: T[]) => {
    const items = batch.map(itemOf);
    // The memory the worker moved here, given back once the batch is stored.
    const moved: ArrayBuffer[] = [];
    let retire = false;
    const take = (reply: BatchReply) => {
      moved.push(...ownBuffers(reply.records.map((r) => r.bytes)), ...tailBuffers(reply.records));
      retire ||= reply.retire;
      return reply.records.map(withFacts);
    };
    const watched = async (of: BatchItem[]) => {
      const beats = newBeats(), watch = watchStall(beats, stallMs);
      try {
        return take(await pool.run<BatchReply>('reduceBatch', { items: of, beats } satisfies BatchTask, watch.signal));
      } catch (e) {
        // A thread stopped for a stall or crashed cannot remove its MAT-file copies: gone now, not at the run's end.
        await sweepStoppedThreads(pool.threadIds());
        if (!watch.stalled()) throw e;
        threadsGivenUp++;
        throw new Stalled(stallMs);
      } finally { watch.stop(); }
    };
    // One recording alone: its own reduction, counted in the stalls in a row.
    const alone = async (item: BatchItem): Promise<StoredRecord[]> => {
      if (stallsInARow >= STALLS_IN_A_ROW) return [workerStopped(item, notTried())];
      try {
        const out = await watched([item]);
        stallsInARow = 0;
        return out;
      } catch (e) {
        if (e instanceof Stalled) stallsInARow++;
        return [workerStopped(item, e as Error)];
      }
    };
    let results: StoredRecord[] | null = null;
    if (items.length > 1 && stallsInARow < STALLS_IN_A_ROW) {
      try {
        results = await watched(items);
        stallsInARow = 0;
      } catch { /* out of memory, a native crash or a stall: each recording of the batch alone, so one bad file sinks no other */ }
    }
    if (!results) {
      results = [];
      for (const item of items) results.push(...await alone(item));
    }
    // A thread that asks to be replaced is, once its batch is back (the others with it, each after its task).
    if (retire) await pool.renew();
    try {
      if (!failure) await onBatch(results, batch);
    } catch (e) { failure ??= e; } finally { release(moved); }
  };
  await eachAtOnce(batches, pool.threads * BATCHES_IN_FLIGHT, one, () => !!failure);
  if (failure) throw failure;
  return { threadsGivenUp };
}

/**
 * A record from a worker with its facts read from its bytes each time they are asked for: made and dropped at once,
 * they never outlive the collector's young generation, where facts copied over with every batch piled up in the old one.
 */
const withFacts = ({ bytes, tail }: BatchResult): StoredRecord => ({ bytes, tail, get facts() { return recordFacts(bytes); } });

/** The failure key and reason of a worker that stopped: a first stall, or not being tried, says nothing of the file, so the next run tries it again. */
function failureOf(e: Error, stalledBefore: boolean, specHash: string): { failureKey: string; reason: string } {
  if (e instanceof Stalled) return stalledBefore ? { failureKey: specHash, reason: e.again } : { failureKey: STALLED, reason: e.message };
  if (e instanceof NoProgress) return { failureKey: NOT_TRIED, reason: e.message };
  return { failureKey: specHash, reason: `worker stopped: ${e.message}` };
}

/** The record of a recording whose worker stopped. */
function workerStopped(item: BatchItem, e: Error): StoredRecord {
  const s = item.store;
  const { failureKey, reason } = failureOf(e, s.stalledBefore, s.specHash);
  const facts = {
    recording: item.job.recording, group: item.job.group, status: 'failed' as const, reason,
    version: s.version, identity: s.identity, readAtMs: s.readAtMs, declKey: s.declKey, groupKeys: {}, failureKey, seconds: 0, frames: 0, sampleRate: null, startTime: null, channels: 0, notes: { '': [] }, storedAt: Date.now(),
  };
  return { facts, bytes: encodeRecord(facts, { recording: facts.recording, group: facts.group, status: 'failed', reason: facts.reason, base: null, groups: {} }) };
}
