// Small recordings travel in batches: one worker task, one message and one pack write for many recordings.
// The worker reduces each recording of a batch in turn and returns each one's record, ready to append to the pack.
import { statSync } from 'node:fs';
import { eachAtOnce } from '../at-once.js';
import { hashFile } from '../plan/hash-file.js';
import type { RecordingJob } from '../plan/plan.js';
import { RecordReader } from '../store/pack.js';
import type { Located } from '../store/pack.js';
import { decodeResults, encodeRecord, encodeRecordPieces, READ_AGAIN, recordBody, splitEntry, type CacheEntry, type EntryFacts, type Identity } from '../store/record.js';
import { activeStages, type ActiveStage } from '../../stages/index.js';
import { computeRecording } from './compute.js';
import { tailBuffers } from '../store/release.js';
import { beat, type Beats } from './stall-watch.js';
import type { RecordingOutput } from './result.js';

/** What a worker needs, beside the job, to store the recording's entry. */
export interface StoreFacts {
  identity: Identity;
  /** Hash the file's content in the worker (its modification time is too recent to trust alone, or --hash). */
  hashContent: boolean;
  readAtMs: number;
  declKey: string;
  version: string;
  keys: Record<string, string>;
  specHash: string;
  /** Groups to compute (none: only store the previous entry again, under fresh identity facts). */
  compute: string[];
  reused: string[];
  /** The stored entry the reused groups come from. */
  previous: Located | null;
  /** Its reduction stalled in the run before, the file unchanged: a second stall is kept as a failure. */
  stalledBefore: boolean;
}

export interface BatchItem { job: RecordingJob; store: StoreFacts }
/**
 * A record as it travels to the main thread: its bytes only (the facts are in them, read where they are needed), and
 * after them, for a recording with long tables, the rest of its bytes as the tables' own column chunks.
 */
export interface BatchResult { bytes: Uint8Array; tail?: Uint8Array[] }
/** A batch's records, and whether the thread asks to be replaced (it holds memory only its end gives back). */
export interface BatchReply { records: BatchResult[]; retire: boolean }
/** A record and its facts; `tail`, when there is one, holds the rest of its bytes. */
export interface StoredRecord { facts: EntryFacts; bytes: Uint8Array; tail?: Uint8Array[] }

/** The entry to store: fresh groups over reused ones. */
export function mergeEntry(s: StoreFacts, fresh: RecordingOutput, previous: CacheEntry | null): CacheEntry {
  const common = { version: s.version, identity: s.identity, readAtMs: s.readAtMs, declKey: s.declKey };
  if (fresh.status === 'failed') {
    const { readAgain, ...failed } = fresh;
    return { ...failed, ...common, groupKeys: {}, failureKey: readAgain ? READ_AGAIN : s.specHash } as CacheEntry;
  }
  const keep = previous && previous.status === 'reduced' ? Object.fromEntries(s.reused.map((g) => [g, previous.groups[g]]).filter(([, v]) => v)) : {};
  const groups = { ...keep, ...fresh.groups };
  // A group with no stage for any channel (e.g. envelope without accelerometers) still counts as computed.
  for (const g of s.compute) groups[g] ??= { columns: fresh.base!.channels.map(() => ({})), flags: fresh.base!.channels.map(() => []), evidence: fresh.base!.channels.map(() => null), tables: {}, notes: [] };
  return { ...fresh, ...common, groups, groupKeys: Object.fromEntries(Object.keys(groups).map((g) => [g, s.keys[g]]).filter(([, k]) => k)) } as CacheEntry;
}

/**
 * The output, or a failure when the file changed since the scan found it (a capture still being written when the run
 * began): figures from part of a recording are not kept. The failure is stored to be read again by the next run whatever it
 * finds: its content hash, taken while the file was rewritten, may already be the new content's.
 */
export function unlessChanged(job: RecordingJob, seen: Identity, out: RecordingOutput): RecordingOutput {
  // One synchronous stat (some microseconds): a worker reduces its recordings in turn anyway. A file gone since was read whole.
  const now = (() => { try { return statSync(job.path, { throwIfNoEntry: false }); } catch { return undefined; } })();
  if (!now || (now.size === seen.size && now.mtimeMs === seen.mtimeMs)) return out;
  const change = now.size !== seen.size ? `${seen.size} bytes when the run found it, ${now.size} after reading` : `modified again at ${new Date(now.mtimeMs).toISOString()}`;
  return {
    ...out, status: 'failed', base: null, groups: {}, readAgain: true,
    reason: `the file changed since the run found it (${change}): probably still being written; nothing from this read is kept, and the next run reads it again`,
  };
}

/** Recordings of a batch reduced at once in a worker (batches hold small recordings; a large one travels alone). */
const IN_FLIGHT = 8;

/** Reduces a batch (in a worker): each recording read once, its entry encoded with its checksums; `beats` counts its progress for the main thread's stall watch. */
export async function reduceBatch(items: BatchItem[], beats: Beats | null = null): Promise<BatchResult[]> {
  const progressed = () => beat(beats);
  // The stages a spec turns on, made once for the batch (its recordings share one spec).
  const stagesOf = new Map<RecordingJob['spec'], ActiveStage[]>();
  const active = (job: RecordingJob) => stagesOf.get(job.spec) ?? stagesOf.set(job.spec, activeStages(job.spec)).get(job.spec)!;
  const compute = (job: RecordingJob) => computeRecording(job, { active: active(job), onProgress: progressed });
  // One descriptor a pack for the whole batch.
  const records = new RecordReader();
  const previousRecord = (loc: Located) => records.read(loc, loc.facts.recording);
  const one = async ({ job, store: s }: BatchItem): Promise<StoredRecord> => {
    progressed();
    const identity = { ...s.identity };
    if (s.hashContent) identity.hash = await hashFile(job.path).catch(() => null);
    const storedAt = Date.now();
    if (s.compute.length === 0 && s.previous) {
      // Nothing to compute: the same results, stored again under the identity just confirmed.
      const facts: EntryFacts = { ...s.previous.facts, identity, readAtMs: s.readAtMs, storedAt };
      return { facts, bytes: encodeRecord(facts, recordBody(previousRecord(s.previous))) };
    }
    const fresh = unlessChanged(job, s.identity, await compute(job));
    let previous: CacheEntry | null = null;
    if (s.previous && s.reused.length && fresh.status === 'reduced') {
      try { previous = { ...s.previous.facts, ...decodeResults(recordBody(previousRecord(s.previous))) }; } catch { previous = null; }
    }
    if (s.reused.length && !previous && fresh.status === 'reduced') {
      // The stored groups could not be read back: compute every group.
      const whole = unlessChanged(job, s.identity, await compute({ ...job, groups: null }));
      return encode(mergeEntry({ ...s, identity, compute: Object.keys(s.keys), reused: [] }, whole, null), storedAt);
    }
    return encode(mergeEntry({ ...s, identity }, fresh, previous), storedAt);
  };
  try {
    // A few recordings at once: small files spend their time waiting on opens and reads, which then overlap.
    const out: StoredRecord[] = new Array(items.length);
    await eachAtOnce(items, IN_FLIGHT, async (item, i) => { out[i] = await one(item); progressed(); });
    return together(out);
  } finally {
    records.close();
  }
}

/** The batch's records laid one after another in one array of their own, as they will lie in the pack: one piece of memory to move and write. */
function together(results: StoredRecord[]): BatchResult[] {
  const all = new Uint8Array(results.reduce((n, r) => n + r.bytes.length, 0));
  let at = 0;
  return results.map(({ bytes, tail }) => {
    all.set(bytes, at);
    at += bytes.length;
    return { bytes: all.subarray(at - bytes.length, at), ...(tail?.length ? { tail } : {}) };
  });
}

/** The memory a batch's records lie in, and their tails' (to move them to the main thread rather than copy them). */
export const batchBuffers = (results: BatchResult[]): ArrayBuffer[] =>
  (results.length ? [results[0].bytes.buffer as ArrayBuffer, ...tailBuffers(results)] : []);

function encode(entry: CacheEntry, storedAt: number): StoredRecord {
  const { facts, results } = splitEntry(entry, storedAt);
  const { head, tail } = encodeRecordPieces(facts, results);
  return { facts, bytes: head, ...(tail.length ? { tail } : {}) };
}
