// Decides, per recording, what a run may reuse from earlier runs and what it must compute, and says why.
import pLimit from 'p-limit';
import { declarationKey, hashFile, type Identity } from './cache.js';
import type { RecordingJob } from './plan.js';
import type { ScannedRecording } from '../select/scan.js';
import type { StoreFacts } from '../reduce/batch.js';
import type { Store } from '../store/store.js';

export interface Decision {
  recording: string;
  /** The recording's group, as its index in the declaration. */
  group: number;
  /** The job, with the groups to compute (null when the entry is reused whole as it is). */
  job: RecordingJob | null;
  /** What the worker needs to store the entry (null when the entry is reused whole as it is). */
  store: StoreFacts | null;
  /** Groups to compute (none: reuse whole). */
  compute: string[];
  reused: string[];
  why: string;
  /** Nothing to compute, but the entry is stored again under identity facts confirmed now (so later runs need not hash the file). */
  restamp: boolean;
}

export interface DecideOptions { version: string; keys: Record<string, string>; specHash: string; force?: boolean; hash?: boolean }

/** Modification times within this of the read are not trusted alone (file systems keep mtimes as coarse as 2 s). */
const AMBIGUOUS_MS = 2000;

const NONE: string[] = [];

/** Jobs are made (by `jobOf`) only for the recordings that need a worker; the others cost a small decision each. */
export async function decide(recordings: ScannedRecording[], jobOf: (r: ScannedRecording) => RecordingJob, store: Store, o: DecideOptions): Promise<Decision[]> {
  const groups = Object.keys(o.keys);
  const declKeys = new Map<number, string>();
  const limit = pLimit(16); // bounded concurrent hashes
  return Promise.all(recordings.map((r) => limit(async (): Promise<Decision> => {
    const { readAtMs } = r;
    const identity: Identity = { size: r.size, mtimeMs: r.mtimeMs, hash: null };
    const declKey = declKeys.get(r.group) ?? declKeys.set(r.group, declarationKey(jobOf(r))).get(r.group)!;
    const previous = o.force ? null : store.get(r.recording) ?? null;
    const entry = previous?.facts;
    const fresh = identity.mtimeMs >= readAtMs - AMBIGUOUS_MS;
    const wasAmbiguous = !!entry && entry.identity.mtimeMs >= entry.readAtMs - AMBIGUOUS_MS;
    // Hashes needed only to compare with a stored entry are taken here; a new recording's is taken in its worker.
    if (entry && (fresh || o.hash || wasAmbiguous)) identity.hash = await hashFile(r.path);
    const facts = { identity, hashContent: !entry && (fresh || !!o.hash), readAtMs, declKey, version: o.version, keys: o.keys, specHash: o.specHash };
    const all = (why: string): Decision => ({ recording: r.recording, group: r.group, job: { ...jobOf(r), groups: null }, store: { ...facts, compute: groups, reused: NONE, previous: null }, compute: groups, reused: NONE, why, restamp: false });
    if (o.force) return all('forced (--force)');
    if (!entry) {
      const damage = store.damageOf(r.recording);
      return all(damage ? `stored entry damaged (${damage.problem}); recomputed` : 'new recording');
    }
    if (entry.version !== o.version) return all(`tool version changed (${entry.version} → ${o.version})`);
    const sameContent = entry.identity.size === identity.size && (identity.hash && entry.identity.hash ? entry.identity.hash === identity.hash : entry.identity.mtimeMs === identity.mtimeMs && !identity.hash);
    if (!sameContent) return all('content changed (size, modification time or content hash)');
    if (entry.declKey !== facts.declKey) return all('declaration changed');
    // Confirmed by content now that the modification time can be trusted: store the entry again so later runs need not hash.
    const restamp = wasAmbiguous && !fresh;
    const keep = (compute: string[], reused: string[], why: string): Decision => (compute.length || restamp
      ? { recording: r.recording, group: r.group, job: { ...jobOf(r), groups: compute }, store: { ...facts, compute, reused, previous }, compute, reused, why, restamp: compute.length === 0 }
      : { recording: r.recording, group: r.group, job: null, store: null, compute: NONE, reused, why, restamp: false });
    if (entry.status === 'failed') {
      return entry.failureKey === o.specHash ? keep(NONE, NONE, 'failed before; file, declaration and spec unchanged') : all('failed before; the spec changed since');
    }
    const stale = groups.filter((g) => entry.groupKeys[g] !== o.keys[g]);
    return stale.length ? keep(stale, groups.filter((g) => !stale.includes(g)), `spec changed for ${stale.join(', ')}`) : keep(NONE, groups, 'unchanged');
  })));
}
