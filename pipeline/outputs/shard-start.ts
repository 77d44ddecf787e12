// A shard run's start, kept beside its part until the part it writes at its end supersedes it: a shard stopped part-way
// (killed, timed out, failed) leaves its start newer than its part, whether or not its lock was left behind. A shard that
// fails before it takes its lock (a spec that cannot be read) keeps its start too, with why, so merge does not take the
// earlier night's part without a word.
import { hostname } from 'node:os';
import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { writeFileAtomic } from './atomic.js';

export interface ShardStart {
  run_id: string; host: string; pid: number; started: string; command: string;
  /** Why the run stopped before it took its lock (its error's message); absent for a run that took it. */
  failed?: string;
}

export const shardStartPath = (out: string, shard: { k: number; n: number }) => join(out, 'parts', `started-${shard.k}-of-${shard.n}.json`);

/**
 * Keeps that this shard's run began (after it took its lock, so two runs of one shard never write it at once), or, with
 * `failed`, that it stopped before taking it.
 */
export async function markShardStart(out: string, shard: { k: number; n: number }, run: { run_id: string; command: string }, failed?: string): Promise<void> {
  const start: ShardStart = { run_id: run.run_id, host: hostname(), pid: process.pid, started: new Date().toISOString(), command: run.command, ...(failed != null ? { failed } : {}) };
  await writeFileAtomic(shardStartPath(out, shard), JSON.stringify(start, null, 2) + '\n');
}

/** The latest start kept for this shard, or null (none kept: parts written before starts were kept, or unreadable). */
export async function readShardStart(out: string, shard: { k: number; n: number }): Promise<ShardStart | null> {
  try {
    const s = JSON.parse(await readFile(shardStartPath(out, shard), 'utf8')) as Partial<ShardStart>;
    return typeof s.run_id === 'string' && typeof s.started === 'string' ? (s as ShardStart) : null;
  } catch {
    return null;
  }
}
