// Which shard parts a merge can combine: one shard count, every shard's part, each from its shard's latest run. A shard
// whose latest run stopped part-way left an older part from an earlier night, which would merge without a word.
import { leftLock, lockPath } from '../outputs/lock.js';
import type { RunRecord } from '../outputs/report.js';
import { readShardStart } from '../outputs/shard-start.js';
import { shellWord } from '../rerun-command.js';
import { resolve } from 'node:path';

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


/** Shard numbers in words: "shard 2" or "shards 1, 3". */
const shardsWord = (ks: number[]) => `${ks.length === 1 ? 'shard' : 'shards'} ${ks.join(', ')}`;

/**
 * Shards of count `n` that have written no part, with what their kept start and left lock tell: failed at the start (its
 * error), killed or stopped part-way (host, pid, start; the lock a holder now gone left), or never started; and what to run.
 * Shards still running are refused before, by their held locks.
 */
export async function missingShards(out: string, n: number, parts: RunRecord[]): Promise<string[]> {
  const problems: string[] = [], never: number[] = [];
  for (let k = 1; k <= n; k++) {
    if (parts.some((p) => p.shard?.k === k)) continue;
    const shard = { k, n };
    const start = await readShardStart(out, shard);
    const lock = await leftLock(lockPath(out, shard));
    const latest = start ?? lock?.holder ?? null;
    if (!latest && !lock) { never.push(k); continue; }
    const who = latest ? `host ${latest.host}, pid ${latest.pid}, started ${latest.started}` : 'its holder unreadable';
    const again = `run shard ${k}/${n} again${latest?.command ? ` (${latest.command})` : ''}, then merge`;
    if (start?.failed != null) problems.push(`shard ${k} of ${n} failed at the start of its run, before taking its lock (${who}): ${start.failed}; it has written no part: mend that, ${again}`);
    else problems.push(`shard ${k} of ${n} did not finish its run (${who}; ${lock ? `killed or ended by its machine: its lock parts/run-${k}-of-${n}.lock is left behind: ${lock.why}` : 'it ended before writing its part'}), so it has written no part: ${again}`);
  }
  if (never.length) {
    const recorded = await recordedCommand(out, n);
    const commands = never.map((k) => (recorded ? asShard(recorded, k, n) : `quern reduce <archive> --out ${shellWord(resolve(out))} --shard ${k}/${n}`)).join('; ');
    const options = recorded ? '' : ', with the options the other shards were given';
    problems.unshift(`${shardsWord(never)} of ${n} ${never.length > 1 ? 'have not written their part yet; run them' : 'has not written its part yet; run it'} (${commands}${options}), then merge again`);
  }
  return problems;
}

/** A shard's command made another's: the recorded command ends with its `--shard K/N` (rerun-command.ts), changed to k. */
export function asShard(command: string, k: number, n: number): string {
  return /--shard \d+\/\d+$/.test(command) ? command.replace(/--shard \d+\/\d+$/, `--shard ${k}/${n}`) : `${command} --shard ${k}/${n}`;
}

/** The command a shard of count `n` recorded at its start (the first in shard order that did), for the shards never run. */
async function recordedCommand(out: string, n: number): Promise<string | null> {
  for (let k = 1; k <= n; k++) {
    const start = await readShardStart(out, { k, n });
    if (start?.command) return start.command;
  }
  return null;
}

/** Parts reduced by another version of quern than this merge's, named by shard and version, with what to run again. */
export function versionProblem(parts: RunRecord[], version: string): string | null {
  if (parts.every((p) => p.version === version)) return null;
  const byVersion = new Map<string, number[]>();
  for (const p of [...parts].sort((a, b) => a.shard!.k - b.shard!.k)) byVersion.set(p.version, [...(byVersion.get(p.version) ?? []), p.shard!.k]);
  const n = parts[0].shard!.n;
  const said = [...byVersion].map(([v, ks]) => `${shardsWord(ks)} of ${n} by quern ${v}`).join(', ');
  const others = parts.filter((p) => p.version !== version).map((p) => p.shard!.k).sort((a, b) => a - b);
  return `the parts were reduced by different versions of quern (${said}; this merge is quern ${version}), whose figures differ: run ${shardsWord(others)} of ${n} again with quern ${version}, then merge`;
}

/** Parts reduced with different specs, grouped by spec (its hash's first 12 digits and its file, or `(default)`), naming each group's shards. */
export function specProblem(parts: RunRecord[]): string | null {
  const bySpec = new Map<string, { source: string; ks: number[] }>();
  for (const p of [...parts].sort((a, b) => a.shard!.k - b.shard!.k)) {
    const was = bySpec.get(p.spec.hash);
    if (was) was.ks.push(p.shard!.k);
    else bySpec.set(p.spec.hash, { source: p.spec.source, ks: [p.shard!.k] });
  }
  if (bySpec.size < 2) return null;
  const n = parts[0].shard!.n;
  const said = [...bySpec].map(([hash, s]) => `${shardsWord(s.ks)} of ${n} with spec ${hash.slice(0, 12)} from ${s.source}`).join('; ');
  return `the parts were reduced with different specs: ${said}; run the shards whose spec is not the one meant again with it, so that every shard runs with the same spec, then merge`;
}
