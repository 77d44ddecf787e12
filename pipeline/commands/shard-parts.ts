// Which shard parts a merge can combine: one shard count, every shard's part, each from its shard's latest run. A shard
// whose latest run stopped part-way left an older part from an earlier night, which would merge without a word.
import { leftLock, lockPath } from '../outputs/lock.js';
import type { RunRecord } from '../outputs/report.js';
import { readShardStart } from '../outputs/shard-start.js';

/** The shard count of the newest part (by its run's start): parts of any other count are an older layout's. */
export function currentCount(parts: RunRecord[]): number {
  return parts.reduce((a, b) => (b.started > a.started ? b : a)).shard!.n;
}

/** Parts of another shard count than the newest part's, named with the count and what to delete. */
export function staleCountProblem(parts: RunRecord[]): string | null {
  const n = currentCount(parts);
  const stale = [...new Set(parts.map((p) => p.shard!.n).filter((m) => m !== n))].sort((a, b) => a - b);
  if (!stale.length) return null;
  const latest = (m: number) => parts.filter((p) => p.shard!.n === m).reduce((a, b) => (b.started > a.started ? b : a)).started;
  const olds = stale.map((m) => `${m} shards (latest part started ${latest(m)})`).join(', ');
  return `the parts come from different shard counts: ${n} shards (latest part started ${latest(n)}) and, older, ${olds}; the parts of ${stale.join(' and ')} shards are stale: delete ${stale.map((m) => `parts/*-of-${m}.*`).join(' and ')} (cache/ keeps their stored results), then merge again`;
}

/**
 * Shards whose latest run did not finish: a start kept after the part it left (the part is an earlier run's; one marked
 * failed stopped before taking its lock, a spec that could not be read, say), or, for
 * parts written before starts were kept, a lock that a run now gone left behind and that names another run than the part.
 */
export async function unfinishedShards(out: string, parts: RunRecord[]): Promise<string[]> {
  const problems: string[] = [];
  for (const p of parts) {
    const shard = p.shard!;
    const start = await readShardStart(out, shard);
    const lock = await leftLock(lockPath(out, shard));
    const latest = start ?? lock?.holder ?? null;
    const unfinished = start ? start.run_id !== p.run_id : lock != null && lock.holder?.run_id !== p.run_id;
    if (!unfinished) continue;
    const who = latest ? `host ${latest.host}, pid ${latest.pid}, started ${latest.started}` : 'its holder unreadable';
    if (start?.failed != null) {
      problems.push(`shard ${shard.k} of ${shard.n} failed at the start of its latest run, before taking its lock (${who}): ${start.failed}; so parts/run-${shard.k}-of-${shard.n}.json is from its run started ${p.started} and lacks what came since: mend that, run shard ${shard.k}/${shard.n} again${start.command ? ` (${start.command})` : ''}, then merge`);
      continue;
    }
    const sign = lock ? `its lock parts/run-${shard.k}-of-${shard.n}.lock is left behind: ${lock.why}` : 'it ended before writing its part';
    problems.push(`shard ${shard.k} of ${shard.n} did not finish its latest run (${who}; ${sign}), so parts/run-${shard.k}-of-${shard.n}.json is from its run started ${p.started} and lacks what came since: run shard ${shard.k}/${shard.n} again${latest && 'command' in latest && latest.command ? ` (${latest.command})` : ''}, then merge`);
  }
  return problems;
}

