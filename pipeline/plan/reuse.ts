// Decides, per recording, what a run may reuse from earlier runs and what it must compute, and says why.
import { stat } from 'node:fs/promises';
import pLimit from 'p-limit';
import { declarationKey, hashFile, readEntry, type CacheEntry, type Identity } from './cache.js';
import type { RecordingJob } from './plan.js';
import type { RecordingOutput } from '../reduce/result.js';

export interface Decision {
  job: RecordingJob;
  /** The stored entry whose groups may be reused (null: nothing reusable). */
  entry: CacheEntry | null;
  identity: Identity;
  readAtMs: number;
  declKey: string;
  /** Groups to compute: every group, some, or none. */
  compute: string[];
  reused: string[];
  why: string;
}

export interface DecideOptions { out: string; version: string; keys: Record<string, string>; specHash: string; force?: boolean; hash?: boolean }

/** Modification times within this of the read are not trusted alone (file systems keep mtimes as coarse as 2 s). */
const AMBIGUOUS_MS = 2000;

export async function decide(jobs: RecordingJob[], o: DecideOptions): Promise<Decision[]> {
  const groups = Object.keys(o.keys);
  const limit = pLimit(16); // bounded concurrent file reads: stats, entries, hashes
  return Promise.all(jobs.map((job) => limit(async (): Promise<Decision> => {
    const s = await stat(job.path);
    const readAtMs = Date.now();
    const identity: Identity = { size: s.size, mtimeMs: s.mtimeMs, hash: null };
    const declKey = declarationKey(job);
    const entry = o.force ? null : await readEntry(o.out, job.recording);
    const fresh = identity.mtimeMs >= readAtMs - AMBIGUOUS_MS;
    if (fresh || o.hash || (entry && entry.identity.mtimeMs >= entry.readAtMs - AMBIGUOUS_MS)) identity.hash = await hashFile(job.path);
    const all = (why: string): Decision => ({ job: { ...job, groups: null }, entry: null, identity, readAtMs, declKey, compute: groups, reused: [], why });
    if (o.force) return all('forced (--force)');
    if (!entry) return all('new recording');
    if (entry.version !== o.version) return all(`tool version changed (${entry.version} → ${o.version})`);
    const sameContent = entry.identity.size === identity.size && (identity.hash && entry.identity.hash ? entry.identity.hash === identity.hash : entry.identity.mtimeMs === identity.mtimeMs && !identity.hash);
    if (!sameContent) return all('content changed (size, modification time or content hash)');
    if (entry.declKey !== declKey) return all('declaration changed');
    if (entry.status === 'failed') {
      return entry.failureKey === o.specHash
        ? { job, entry, identity, readAtMs, declKey, compute: [], reused: [], why: 'failed before; file, declaration and spec unchanged' }
        : all('failed before; the spec changed since');
    }
    const stale = groups.filter((g) => entry.groupKeys[g] !== o.keys[g]);
    const reused = groups.filter((g) => !stale.includes(g));
    return {
      job: { ...job, groups: stale.length ? stale : [] }, entry, identity, readAtMs, declKey, compute: stale, reused,
      why: stale.length ? `spec changed for ${stale.join(', ')}` : 'unchanged',
    };
  })));
}

/** The entry to store after a run: fresh groups over reused ones. */
export function mergeEntry(d: Decision, fresh: RecordingOutput | null, o: DecideOptions): CacheEntry {
  const common = { version: o.version, identity: d.identity, readAtMs: d.readAtMs, declKey: d.declKey };
  if (!fresh) return { ...d.entry!, ...common };
  if (fresh.status === 'failed') return { ...fresh, ...common, groupKeys: {}, failureKey: o.specHash };
  const keep = d.entry && d.entry.status === 'reduced' ? Object.fromEntries(d.reused.map((g) => [g, d.entry!.groups[g]]).filter(([, v]) => v)) : {};
  const groups = { ...keep, ...fresh.groups };
  // A group with no stage for any channel (e.g. envelope without accelerometers) still counts as computed.
  for (const g of d.compute) groups[g] ??= { columns: fresh.base!.channels.map(() => ({})), flags: fresh.base!.channels.map(() => []), evidence: fresh.base!.channels.map(() => null), tables: {}, notes: [] };
  return { ...fresh, ...common, groups, groupKeys: Object.fromEntries(Object.keys(groups).map((g) => [g, o.keys[g]]).filter(([, k]) => k)) };
}
