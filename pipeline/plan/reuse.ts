// Decides, per recording, what a run may reuse from earlier runs and what it must compute, and says why.
import { eachAtOnce } from '../at-once.js';
import { declarationKey, type Identity } from './cache.js';
import { hashFile } from './hash-file.js';
import type { RecordingJob } from './plan.js';
import type { ScannedRecording } from '../select/scan.js';
import type { BatchItem } from '../reduce/batch.js';
import type { Located } from '../store/pack.js';
import { lostWhy } from '../store/pack-cut.js';
import { NOT_TRIED, READ_AGAIN, STALLED } from '../store/record.js';
import type { Store } from '../store/store.js';

/** What to do with a recording and why (a view of the decisions' packed columns). The worker's job is made from it only when the batch goes out. */
export interface Decision {
  recording: string;
  /** The recording's group, as its index in the declaration. */
  group: number;
  /** The scanned file (path, size, modification time, when they were read). */
  file: ScannedRecording;
  /** The content hash taken while deciding, when size and modification time could not be trusted alone. */
  hash: string | null;
  /** Hash the content in the worker (a new recording whose modification time is too recent to trust alone, or --hash). */
  hashContent: boolean;
  /** The stored entry the reused groups come from; null when everything is computed. */
  previous: Located | null;
  /** Groups to compute (none: reuse whole). */
  compute: string[];
  reused: string[];
  why: string;
  /** Whether an entry is stored for it in this run (groups computed, or a restamp); false: the stored entry stands as it is. */
  stores: boolean;
  /** Nothing to compute, but the entry is stored again under identity facts confirmed now (so later runs need not hash the file). */
  restamp: boolean;
  /** Its reduction stalled in the run before, with the file and its declaration as they are now. */
  stalledBefore: boolean;
}

export interface DecideOptions {
  version: string; keys: Record<string, string>; specHash: string; force?: boolean; hash?: boolean;
  /** Reduce again the recordings whose stored entry is a failure (the cause was outside the file, and is mended). */
  retryFailed?: boolean;
}

/** Modification times within this of the read are not trusted alone (file systems keep mtimes as coarse as 2 s). */
const AMBIGUOUS_MS = 2000;
/** Content hashes taken at once while deciding. */
const HASHES_AT_ONCE = 16;

const NONE: string[] = [];

/** A stored entry as plain data, to travel to a worker (the store's entries read their columns through getters). */
const plainPlace = (l: Located): Located => ({ file: l.file, offset: l.offset, length: l.length, bodySha: l.bodySha, facts: l.facts });

/** What deciding made, and how to turn a decision into the worker's batch item. */
export interface Decided {
  decisions: Decision[];
  /** The job and the storing facts of a recording that needs a worker (made when its batch goes out, dropped after). */
  itemOf(d: Decision): BatchItem;
  /** The identity facts confirmed now. */
  identityOf(d: Decision): Identity;
}

/**
 * The decisions in packed columns: per recording a few flags and the indices of its reason and group lists, each distinct
 * value once. A decision is a small view of its row, and its stored entry is the store's current one for the recording.
 */
class DecisionTable {
  readonly flags: Uint8Array;
  readonly why: Uint32Array;
  readonly compute: Uint32Array;
  readonly reused: Uint32Array;
  /** Content hashes taken while deciding, by row (few: only where the modification time cannot be trusted alone). */
  readonly hashes = new Map<number, string>();
  private readonly texts: string[] = [];
  private readonly textIds = new Map<string, number>();
  private readonly lists: string[][] = [];
  private readonly listIds = new Map<string, number>();
  constructor(readonly files: readonly ScannedRecording[], readonly store: Store) {
    const n = files.length;
    this.flags = new Uint8Array(n);
    this.why = new Uint32Array(n);
    this.compute = new Uint32Array(n);
    this.reused = new Uint32Array(n);
  }
  set(row: number, hash: string | null, f: { hashContent: boolean; previous: boolean; stores: boolean; restamp: boolean; stalledBefore: boolean }, compute: string[], reused: string[], why: string): void {
    this.flags[row] = (f.hashContent ? HASH_CONTENT : 0) | (f.previous ? PREVIOUS : 0) | (f.stores ? STORES : 0) | (f.restamp ? RESTAMP : 0) | (f.stalledBefore ? STALLED_BEFORE : 0);
    if (hash !== null) this.hashes.set(row, hash);
    this.why[row] = this.textIds.get(why) ?? this.textIds.set(why, this.texts.push(why) - 1).get(why)!;
    this.compute[row] = this.listId(compute);
    this.reused[row] = this.listId(reused);
  }
  text(id: number): string { return this.texts[id]; }
  list(id: number): string[] { return this.lists[id]; }
  private listId(list: string[]): number {
    const key = list.join('\n');
    return this.listIds.get(key) ?? this.listIds.set(key, this.lists.push(list) - 1).get(key)!;
  }
}

const HASH_CONTENT = 1, PREVIOUS = 2, STORES = 4, RESTAMP = 8, STALLED_BEFORE = 16;

/** One recording's decision: reads its row of the table. */
class DecisionView implements Decision {
  constructor(private readonly table: DecisionTable, private readonly row: number) {}
  get file(): ScannedRecording { return this.table.files[this.row]; }
  get recording(): string { return this.file.recording; }
  get group(): number { return this.file.group; }
  get hash(): string | null { return this.table.hashes.get(this.row) ?? null; }
  get hashContent(): boolean { return (this.table.flags[this.row] & HASH_CONTENT) !== 0; }
  get previous(): Located | null { return this.table.flags[this.row] & PREVIOUS ? this.table.store.get(this.recording) ?? null : null; }
  get compute(): string[] { return this.table.list(this.table.compute[this.row]); }
  get reused(): string[] { return this.table.list(this.table.reused[this.row]); }
  get why(): string { return this.table.text(this.table.why[this.row]); }
  get stores(): boolean { return (this.table.flags[this.row] & STORES) !== 0; }
  get restamp(): boolean { return (this.table.flags[this.row] & RESTAMP) !== 0; }
  get stalledBefore(): boolean { return (this.table.flags[this.row] & STALLED_BEFORE) !== 0; }
}

/** Decides every recording; only those whose stored entry must be held against their content cost a wait (a hash). */
export async function decide(recordings: ScannedRecording[], jobOf: (r: ScannedRecording) => RecordingJob, store: Store, o: DecideOptions): Promise<Decided> {
  const groups = Object.keys(o.keys);
  const declKeys = new Map<number, string>();
  const declKeyOf = (r: ScannedRecording) => declKeys.get(r.group) ?? declKeys.set(r.group, declarationKey(jobOf(r))).get(r.group)!;
  const table = new DecisionTable(recordings, store);

  /** The stored entry (none when forced), and whether the file's and the entry's modification times can be trusted alone. */
  const timesOf = (r: ScannedRecording) => {
    const previous = o.force ? null : store.get(r.recording) ?? null;
    const entry = previous?.facts;
    return { previous, entry, fresh: r.mtimeMs >= r.readAtMs - AMBIGUOUS_MS, wasAmbiguous: !!entry && entry.identity.mtimeMs >= entry.readAtMs - AMBIGUOUS_MS };
  };

  /** Decides recording `i` into its row of the table. */
  const one = (i: number, hash: string | null): void => {
    const r = recordings[i];
    const { previous, entry, fresh, wasAmbiguous } = timesOf(r);
    const hashContent = !entry && (fresh || !!o.hash);
    const decision = (from: Located | null, compute: string[], reused: string[], text: string, stores: boolean, restamp: boolean, stalledBefore = false): void =>
      table.set(i, hash, { hashContent, previous: from !== null, stores, restamp, stalledBefore }, compute, reused, text);
    const all = (text: string, stalledBefore = false) => decision(null, groups, NONE, text, true, false, stalledBefore);
    if (o.force) return all('forced (--force)');
    if (!entry) {
      const damage = store.damageOf(r.recording);
      if (damage) return all(`stored entry damaged (${damage.problem}); recomputed`);
      const lost = store.lostEntry(r.recording, r.ctimeMs ?? 0);
      if (lost) return all(lostWhy(lost));
      // Damage whose recording cannot be told may have held this one's entry: said so, not guessed either way.
      const untold = store.damageOfNone();
      return all(untold.length ? `new recording, or its stored entry was damaged past telling whose (${untold.join('; ')}); computed` : 'new recording');
    }
    if (entry.version !== o.version) return all(`tool version changed (${entry.version} → ${o.version})`);
    const sameContent = entry.identity.size === r.size && (hash && entry.identity.hash ? entry.identity.hash === hash : entry.identity.mtimeMs === r.mtimeMs && !hash);
    // Stored without a content hash, an entry cannot vouch for content that --hash asks to compare: computed again, once.
    if (!sameContent && hash && !entry.identity.hash && entry.identity.size === r.size) return all('no content hash stored to compare with (--hash): computed again, and stored with its hash');
    if (!sameContent) return all('content changed (size, modification time or content hash)');
    if (entry.declKey !== declKeyOf(r)) return all('declaration changed');
    // Confirmed by content now that the modification time can be trusted: store the entry again so later runs need not hash.
    const restamp = wasAmbiguous && !fresh;
    const keep = (compute: string[], reused: string[], text: string) => (compute.length || restamp
      ? decision(previous, compute, reused, text, true, compute.length === 0)
      : decision(null, NONE, reused, text, false, false));
    if (entry.status === 'failed') {
      if (entry.failureKey === STALLED) return all('made no progress within the stall limit before; tried once more', true);
      if (entry.failureKey === NOT_TRIED) return all('not tried before (the recordings before it stalled); tried now');
      if (entry.failureKey === READ_AGAIN) return all('changed while it was read before; read again');
      if (o.retryFailed) return all('failed before; tried again (--retry-failed)');
      return entry.failureKey === o.specHash ? keep(NONE, NONE, 'failed before; file, declaration and spec unchanged') : all('failed before; the spec changed since');
    }
    const stale = groups.filter((g) => entry.groupKeys[g] !== o.keys[g]);
    return stale.length ? keep(stale, groups.filter((g) => !stale.includes(g)), `spec changed for ${stale.join(', ')}`) : keep(NONE, groups, 'unchanged');
  };

  // Hashes needed only to compare with a stored entry are taken here; a new recording's is taken in its worker.
  const needsHash = (r: ScannedRecording) => {
    const { entry, fresh, wasAmbiguous } = timesOf(r);
    return !!entry && (fresh || !!o.hash || wasAmbiguous);
  };
  const hashing: number[] = [];
  recordings.forEach((r, i) => { if (needsHash(r)) hashing.push(i); else one(i, null); });
  // A file that cannot be read (a link to a missing target) is judged by size and time; its reduction says why it fails.
  await eachAtOnce(hashing, HASHES_AT_ONCE, async (i) => { one(i, await hashFile(recordings[i].path).catch(() => null)); });
  const decisions: Decision[] = Array.from(recordings, (_, i) => new DecisionView(table, i));

  const identityOf = (d: Decision): Identity => ({ size: d.file.size, mtimeMs: d.file.mtimeMs, hash: d.hash });
  return {
    decisions,
    identityOf,
    itemOf: (d) => ({
      job: { ...jobOf(d.file), groups: d.previous ? d.compute : null },
      store: {
        identity: identityOf(d), hashContent: d.hashContent, readAtMs: d.file.readAtMs, declKey: declKeyOf(d.file), version: o.version, keys: o.keys,
        specHash: o.specHash, compute: d.compute, reused: d.reused, previous: d.previous && plainPlace(d.previous), stalledBefore: d.stalledBefore,
      },
    }),
  };
}
