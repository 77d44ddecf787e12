// Results kept per recording and feature group, so a re-run computes only what changed: the keys that say whether a stored
// group still holds, and the whole stored history. Entries live in packs (pipeline/store/), stored as soon as a batch is done.
import { createHash } from 'node:crypto';
import { canonicalJson } from '../declare/canonical-json.js';
import { activeStages } from '../../stages/index.js';
import type { ReductionSpec } from '../../spec/reduction.js';
import type { RecordingJob } from './plan.js';
import type { ScannedRecording } from '../select/scan.js';
import { RecordReader, RecordsInOrder, type Place } from '../store/pack.js';
import type { StoredEntry } from '../store/entry-table.js';
import { decodeResults, joinEntry, recordBody, type CacheEntry } from '../store/record.js';
import { Store } from '../store/store.js';

export type { CacheEntry, Identity } from '../store/record.js';

const sha = (s: string) => createHash('sha256').update(s).digest('hex');

/** The entries at the places given, in order, each read by `records` (closed at the end); one damaged since it was scanned is passed over. */
async function* decoded(places: Iterable<StoredEntry>, records: { read(loc: Place, recording: string): Buffer | Promise<Buffer>; close(): void | Promise<void>; tables?: boolean }): AsyncGenerator<CacheEntry> {
  try {
    for (const loc of places) {
      const facts = loc.facts;
      let entry: CacheEntry;
      try {
        entry = joinEntry(facts, decodeResults(recordBody(await records.read(loc, facts.recording)), records.tables ?? true));
      } catch {
        continue; // damaged since it was scanned: no history
      }
      yield entry;
    }
  } finally {
    await records.close();
  }
}

function* placesOf(store: Store, recordings: Iterable<string>): Generator<StoredEntry> {
  for (const r of recordings) {
    const loc = store.get(r);
    if (loc) yield loc;
  }
}

/** The stored entries of the named recordings, in the order given, read one at a time; damaged or absent ones are passed over. */
export const entriesOf = (store: Store, recordings: Iterable<string>): AsyncGenerator<CacheEntry> => decoded(placesOf(store, recordings), new RecordReader());

/** Every entry a store holds, whatever this run selected (the history that trends read), by recording. */
export const everyEntry = (store: Store) => entriesOf(store, [...store.entries.keys()].sort());

/** The recordings in the archive now, as the scan found them, each with the name of the group it belongs to now. */
export type Present = ReadonlyMap<string, string>;

/**
 * The entries of the recordings present now (their secondary tables without rows), in the order they lie in the store's packs (a pass over the whole history that
 * needs no order: the trends' series are ordered by start time and name), each under its group's present name: an entry
 * of a recording deleted or renamed since is no history, and one stored under a group's former name belongs to it still.
 * Each pack is read front to back; damaged entries are passed over.
 */
export async function* presentEntriesAsStored(store: Store, present: Present): AsyncGenerator<CacheEntry> {
  const places = [...placesOf(store, present.keys())].map((loc) => ({ loc, file: loc.file, offset: loc.offset }));
  places.sort((a, b) => (a.file < b.file ? -1 : a.file > b.file ? 1 : a.offset - b.offset));
  // The history needs no table rows: a long recording's are checked and passed over, never held.
  for await (const e of decoded(places.map((p) => p.loc), new RecordsInOrder(undefined, false))) yield { ...e, group: present.get(e.recording)! };
}

/** Every entry the output folder holds, read from its packs. */
export async function* storedEntries(out: string): AsyncGenerator<CacheEntry> {
  yield* everyEntry(await Store.open(out));
}

/** The declaration facts a recording's numbers depend on (labels are not among them: they are applied when rows are assembled). */
export const declarationKey = (job: RecordingJob) =>
  sha(canonicalJson({
    format: job.format, sampleRate: job.sampleRate, layout: job.layout, channels: job.channels, durationS: job.durationS,
    // Only declared reader options enter the key, so the keys of groups without them stay as they were.
    ...(job.reader?.hdf5 || job.reader?.flac ? { reader: { hdf5: job.reader.hdf5, flac: job.reader.flac } } : {}),
    ...(job.reader?.mat ? { mat: job.reader.mat } : {}),
  }));

/** Per group (present name), the declaration its recordings are reduced under now, as deciding keys it: an entry stored under a former one is no figure of the same measurement. */
export function declarationsNow(recordings: readonly ScannedRecording[], groupNames: readonly string[], jobOf: (r: ScannedRecording) => RecordingJob): Map<string, ReadonlySet<string>> {
  const declarations = new Map<string, ReadonlySet<string>>();
  for (const r of recordings) if (!declarations.has(groupNames[r.group])) declarations.set(groupNames[r.group], new Set([declarationKey(jobOf(r))]));
  return declarations;
}

/** Per feature group, a key of the tool version and the resolved options of the group's stages. */
export function groupKeys(spec: ReductionSpec, version: string): Record<string, string> {
  const byGroup = new Map<string, unknown[]>();
  for (const s of activeStages(spec)) {
    const list = byGroup.get(s.definition.group) ?? byGroup.set(s.definition.group, []).get(s.definition.group)!;
    list.push({ options: s.options, only: s.only ?? null });
  }
  return Object.fromEntries([...byGroup].map(([g, opts]) => [g, sha(canonicalJson({ version, group: g, opts }))]));
}
