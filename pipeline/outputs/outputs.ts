// Writes a run's tables and reports, shared by reduce (whole or one shard) and merge. The recordings are assembled in
// slices by the workers and arrive here in table order: rows go out in Parquet row groups, quality.json and quality.html
// are put together from spooled pieces, and nothing the size of the run is held in memory. Outputs whose digest says
// they would come out the same are left as they are.
import type { QuietGroup } from '../select/select.js';
import type { BrokenGroup } from './broken-groups.js';
import { createReadStream } from 'node:fs';
import { mkdir, open, rm } from 'node:fs/promises';
import { dirname, join } from 'node:path';
import { createInterface } from 'node:readline';
import type { ReductionSpec } from '../../spec/reduction.js';
import type { Pool } from '../reduce/pool.js';
import { forgetDigest, keepDigest, outputsDigest, readDigest, stillCurrent, withChanges } from './digest.js';
import { addTotals, emptyTotals, type QualitySummary } from './quality.js';
import { addFailGroups, byNews, flagKey, keepReportedFlags, readReportedFlags, type FailGroup, type ReportedFlag } from './quality-news.js';
import { foldEntry, MAX_PICTURED, notesEnd, notesHead, overviewHead, overviewLine, pageEnd, pageHead, picturedAbove, sectionEnd, sectionsHead, type OverviewRow } from './report-html.js';
import { addFolds, byMorning, cutRows, foldNew, type FlagFold } from './flag-folds.js';
import type { TrendsWrite } from '../trends/trends.js';
import type { Candidate, SliceItem, SliceOutput, SliceTask } from './slice.js';
import { ownBuffers, release } from '../store/release.js';
import { slicePieces } from './slice-pieces.js';
import { commitAll, jsonPieces, StagedFile } from './staged.js';
import { keptFiles } from './in-place.js';
import { outputTables } from './output-tables.js';
import type { Located } from '../store/pack.js';

/**
 * Pictures a task draws: at least this many before a second thread is asked (a thread loads the charting code first: some
 * 0.3 s), and no more, so that the report is written out as its pictures come and neither thread holds many at once.
 */
const PICTURES_A_TASK = 24;

/**
 * Where a run writes: `table(name)` gives the file of features.parquet or of a secondary table. `spectra` says whether
 * spectra.parquet is among the outputs (when the spec has a spectrum section): a shard's parts leave it to quern merge.
 */
export interface OutputNames {
  table: (name: string) => string; qualityJson: string; qualityHtml: string | null; digest: string; spectra: boolean;
  /** A working file of the quality report's, never put in place: beside the run's own outputs, so that each lock holder's are its own. */
  spool: (name: string) => string;
}

export const FINAL_NAMES: OutputNames = { table: (name) => `${name}.parquet`, qualityJson: 'quality.json', qualityHtml: 'quality.html', digest: 'outputs.json', spectra: true, spool: (name) => `${name}.spool` };
export const partNames = (k: number, n: number): OutputNames => ({
  table: (name) => `parts/${name}-${k}-of-${n}.parquet`, qualityJson: `parts/quality-${k}-of-${n}.json`, qualityHtml: null, digest: `parts/outputs-${k}-of-${n}.json`, spectra: false,
  spool: (name) => `parts/${name}-${k}-of-${n}.spool`,
});

export const byRecording = <T extends { recording: string }>(xs: T[]) => [...xs].sort((a, b) => (a.recording < b.recording ? -1 : a.recording > b.recording ? 1 : 0));

/** A recording of the outputs: where its entry lies, its group's present name (the entry may be stored under a former one) and labels. */
export interface OutputItem { recording: string; loc: Located; group: string; labels: Record<string, string> }

export interface OutputsInput {
  /** Every recording of the outputs, in table order (by recording), with where its entry lies, its group and the group's labels. */
  items: OutputItem[];
  spec: ReductionSpec; labels: string[]; metadata: Record<string, string>; version: string; runId: string; archive: string; unmatched: string[];
  /** The groups quiet over a --since period, which quality.json and quality.html name (none for a shard's part). */
  quiet?: QuietGroup[];
  /** The broken groups of archive.yaml, whose recordings the run set aside, which quality.json and quality.html name. */
  broken?: BrokenGroup[];
  pool: Pool;
  /**
   * What changed against the baselines (trends on, whole runs and merges): leads quality.json and quality.html. May still
   * be in the making: the slices go to the workers meanwhile, whenever the results alone already mean new outputs.
   */
  changes?: Promise<TrendsWrite | null> | TrendsWrite | null;
  /** Told as the previous outputs begin to be replaced (a stop from then on leaves them to the next run to write again). */
  replacing?: () => void;
}

const COMMA = 0x2c;

/** What the digest reads of each item, made one at a time. */
function* digestItems(items: OutputItem[]) {
  for (const { recording, group, loc, labels } of items) yield { recording, group, bodySha: loc.bodySha, labels };
}

/**
 * What was written: the terminal's quality summary, and whether the outputs were rewritten or already said the same.
 * `keep` writes the new outputs' digest file, which the caller does once the run's record is in place beside them.
 */
export interface Written { quality: QualitySummary; rewritten: boolean; digest: string; writtenBy: string; keep(): Promise<void> }

/**
 * Consecutive recordings a worker assembles at once: bounded by their stored size, so a slice's rows stay small; never
 * fewer than `perThread` slices a thread while there are recordings enough, so a small run's slices use every thread too.
 */
function slices(items: OutputItem[], { threads = 1, perThread = 2, maxItems = 100, maxBytes = 128 << 10 } = {}): OutputItem[][] {
  const total = items.reduce((s, it) => s + it.loc.length, 0);
  maxBytes = Math.max(1, Math.min(maxBytes, Math.ceil(total / (threads * perThread))));
  const out: OutputItem[][] = [];
  let current: OutputItem[] = [], bytes = 0;
  for (const it of items) {
    if (current.length && (current.length >= maxItems || bytes + it.loc.length > maxBytes)) { out.push(current); current = []; bytes = 0; }
    current.push(it);
    bytes += it.loc.length;
  }
  if (current.length) out.push(current);
  return out;
}

/** Appends a file's bytes through one reused buffer: a spool of hundreds of megabytes leaves no trail of read chunks behind. */
async function copyInto(to: StagedFile, from: string, buffer = Buffer.allocUnsafe(COPY_BYTES)): Promise<void> {
  const fh = await open(from, 'r');
  try {
    for (let n: number; (n = (await fh.read(buffer, 0, buffer.length, null)).bytesRead) > 0;) await to.write(buffer.subarray(0, n));
  } finally {
    await fh.close();
  }
}
const COPY_BYTES = 64 << 10;

async function* lines(file: StagedFile): AsyncGenerator<string> {
  if (!file.size) return;
  for await (const line of createInterface({ input: createReadStream(file.tmp), crlfDelay: Infinity })) if (line) yield line;
}

export async function writeOutputs(outDir: string, names: OutputNames, o: OutputsInput): Promise<Written> {
  const spectra = names.spectra && Boolean(o.spec.spectrum);
  const tables = outputTables(o.spec, o.labels, spectra);
  const digestPath = join(outDir, names.digest);
  const basis = outputsDigest({ version: o.version, spec: o.spec, labels: o.labels, tables, metadata: o.metadata, unmatched: o.unmatched, quiet: o.quiet, ...(o.broken?.length ? { broken: o.broken } : {}), items: digestItems(o.items) });
  const made = Promise.resolve(o.changes ?? null);
  made.catch(() => {}); // awaited below; a failure must not also surface as unhandled
  let changes: TrendsWrite | null = null;
  const trends: StagedFile[] = [];
  // Results that differ from those the outputs were made from mean new outputs, whatever changed against the baselines.
  if ((await readDigest(digestPath))?.basis === basis) {
    changes = await made;
    trends.push(...(changes?.files ?? []));
    // The changes rest on the whole history, not only on these items.
    const current = await stillCurrent(outDir, digestPath, withChanges(basis, changes));
    if (current) {
      // Trends tables staged afresh (a history that changed elsewhere) still go in place; the rest is left as it is.
      await changes?.forget();
      await commitAll(trends);
      await changes?.done();
      // The same changes, marked new against this run's previous report: the terminal and the exit code tell this run's news.
      // Nor is any flag new: the previous run reported the same.
      const quality = { ...current.quality, fails: (current.quality.fails ?? []).map((g) => ({ ...g, new: false })), ...(changes?.outcome ? { changes: changes.outcome.report } : {}) };
      return { quality, rewritten: false, digest: current.digest, writtenBy: current.run_id, keep: async () => {} };
    }
  }
  /** The changes, once worked out (on this thread, while the workers assemble slices). */
  const settled = async () => {
    if (changes == null) { changes = await made; trends.push(...(changes?.files ?? [])); }
    return changes;
  };

  await mkdir(dirname(join(outDir, names.table('features'))), { recursive: true });
  // The Parquet writer (WebAssembly) is loaded only by runs that write.
  const [{ ParquetStream }, { partStreams }] = await Promise.all([import('./parquet-stream.js'), import('./rows-part.js')]);
  const staged = (name: string) => new StagedFile(join(outDir, name));
  const parquet = Object.fromEntries(Object.entries(tables).map(([name, columns]) => [name, new ParquetStream(staged(names.table(name)), columns, o.metadata)]));
  const qualityJson = staged(names.qualityJson), qualityHtml = names.qualityHtml ? staged(names.qualityHtml) : null;
  const spool = (name: string) => staged(names.spool(name));
  const spools = { quality: spool('quality-list'), overview: spool('overview'), notes: spool('notes') };
  // The flags the previous run into this folder reported, to mark tonight's new ones (a shard's part marks none: merge does).
  const earlierFlags = qualityHtml ? await readReportedFlags(outDir) : undefined;
  const outputs = [...Object.values(parquet).map((p) => p.file), qualityJson, ...(qualityHtml ? [qualityHtml] : [])];
  try {
    const totals = emptyTotals(o.unmatched.length);
    const summary: QualitySummary = { totals, fails: [], failCount: 0, changes: null };
    const channelNames = new Set<string>();
    const fails = new Map<string, FailGroup>(), channelRecordings = new Map<string, number>(), flagged = new Map<string, 'warn' | 'fail'>();
    // quality.html's entries, one per channel and flag, each bounded (flag-folds.ts): the main thread holds no list of recordings' flags.
    const folds = new Map<string, FlagFold>();
    const counted = { recordings: 0 };
    const take = async (s: SliceOutput) => {
      for (const [name, ipc] of Object.entries(s.tables)) if (ipc) await parquet[name].push(ipc);
      // Secondary tables come as columns, cut into record batches one at a time: a long table is never one stream.
      // Each stream is in the writer's memory once pushed, and its own memory freed at once.
      for (const [name, parts] of Object.entries(s.rows)) for (const part of parts) for await (const ipc of partStreams(part, tables[name])) { await parquet[name].push(ipc); release(ownBuffers([ipc])); }
      // Each part comes after a separator; the very first one's is dropped.
      if (s.recordings) await spools.quality.write(counted.recordings || s.quality[0] !== COMMA ? s.quality : s.quality.subarray(1));
      counted.recordings += s.recordings;
      addTotals(totals, s.totals);
      summary.failCount += s.failCount;
      addFailGroups(fails, s.fails);
      for (const [k, n] of Object.entries(s.channelRecordings)) channelRecordings.set(k, (channelRecordings.get(k) ?? 0) + n);
      for (const [k, sev] of Object.entries(s.flagged)) if (flagged.get(k) !== 'fail') flagged.set(k, sev);
      if (!qualityHtml) return;
      for (const c of s.channels) channelNames.add(c);
      await spools.overview.write(s.overview);
      await spools.notes.write(s.notes);
      addFolds(folds, s.folds);
    };
    // Slices are assembled in parallel and taken in order; a bounded number in flight keeps memory flat.
    // Only where each entry lies travels to the worker, which reads the rest from the entry itself.
    const task = (items: OutputItem[]): SliceTask => ({ items: items.map(({ recording, loc, group, labels }): SliceItem => ({ at: { file: loc.file, offset: loc.offset, length: loc.length, bodySha: loc.bodySha }, recording, group, labels })), spec: o.spec, labels: o.labels, spectra, ...(earlierFlags !== undefined ? { earlierFlags } : {}) });
    const pending: Promise<SliceOutput>[] = [];
    const all = slices(o.items, { threads: o.pool.threads });
    o.pool.widen(all.length);
    let next = 0;
    const launch = () => { while (next < all.length && pending.length < o.pool.threads * 2) pending.push(o.pool.run<SliceOutput>('assembleSlice', task(all[next++]))); };
    launch();
    try {
      while (pending.length) {
        const s = await pending.shift()!;
        launch();
        try { await take(s); } finally { release(ownBuffers(slicePieces(s))); }
      }
    } finally {
      // Slices still in the workers when a write failed: the threads' ending rejects them, and nothing waits for them any more.
      for (const p of pending.splice(0)) p.then((s) => release(ownBuffers(slicePieces(s))), () => {});
    }
    for (const p of Object.values(parquet)) await p.finish();
    const outcome = (await settled())?.outcome ?? null;
    summary.changes = outcome?.report ?? null;
    summary.fails = [...fails.values()].map((g) => ({ ...g, of: channelRecordings.get(flagKey(g.group, g.channel, '')) ?? g.failed })).sort(byNews);

    const generated = new Date().toISOString();
    await spools.quality.close({ durable: false });
    await qualityJson.write(jsonPieces.head({ tool: 'quern', version: o.version, run_id: o.runId, generated, archive: o.archive, totals }, 'recordings'));
    await copyInto(qualityJson, spools.quality.tmp);
    await qualityJson.write(jsonPieces.tail(counted.recordings, { unmatched: o.unmatched, ...(o.broken?.length ? { broken_groups: o.broken } : {}), ...(o.quiet?.length ? { quiet_groups: o.quiet } : {}), ...(outcome ? { changes: outcome.report } : {}) }));
    await qualityJson.close();

    if (qualityHtml) {
      for (const f of [spools.overview, spools.notes]) await f.close({ durable: false });
      const entries = [...folds.values()].map((f) => cutRows(f)).sort(byMorning);
      // Pictures of each entry's latest recording's channel, for the first channels in the report's order, each channel of a
      // recording once (an entry of its other flag points to them): drawn from the entries' data, shared among the threads.
      const firstOf = new Map<string, number>(), pictured: Candidate[] = [];
      const shownAt = entries.map((f, i) => {
        const k = `${f.rows[0].recording}\u0000${f.channel}`;
        if (!firstOf.has(k)) { firstOf.set(k, i); if (pictured.length < MAX_PICTURED) pictured.push({ at: f.rows[0].at, recording: f.rows[0].recording, channel: f.channel }); }
        return firstOf.get(k)!;
      });
      const pictureOf = new Map(pictured.map((c, k) => [`${c.recording}\u0000${c.channel}`, k]));
      const parts = Array.from({ length: Math.ceil(pictured.length / PICTURES_A_TASK) }, (_, k) => pictured.slice(k * PICTURES_A_TASK, (k + 1) * PICTURES_A_TASK));
      o.pool.widen(parts.length);
      const drawn = parts.map((part) => o.pool.run<(string[] | null)[]>('picturesOf', part));
      for (const d of drawn) d.catch(() => {}); // each is awaited in turn below
      // The k-th pictured channel's pictures, once its part is drawn; a part is let go when the next one is taken.
      let heldPart = -1, held: (string[] | null)[] = [];
      const chartsOf = async (k: number) => {
        const part = Math.floor(k / PICTURES_A_TASK);
        if (part !== heldPart) { held = await drawn[part]; drawn[part] = Promise.resolve([]); heldPart = part; }
        return held[k % PICTURES_A_TASK];
      };
      const names = [...channelNames];
      await qualityHtml.write(pageHead({ archive: o.archive, version: o.version, run_id: o.runId, generated }, totals, outcome?.html) + '\n');
      await qualityHtml.write(overviewHead(names) + '\n');
      for await (const line of lines(spools.overview)) await qualityHtml.write(overviewLine(JSON.parse(line) as OverviewRow, names) + '\n');
      await qualityHtml.write(sectionsHead(entries.length, entries.filter(foldNew).length, firstOf.size) + '\n');
      for (const [i, f] of entries.entries()) {
        const k = pictureOf.get(`${f.rows[0].recording}\u0000${f.channel}`);
        const charts = shownAt[i] === i && k !== undefined ? await chartsOf(k) : null;
        await qualityHtml.write(`${foldEntry(f, channelRecordings.get(flagKey(f.group, f.channel, '')) ?? f.failed + f.warned)}\n${sectionEnd(charts, shownAt[i] !== i && k !== undefined ? picturedAbove(entries[shownAt[i]]) : '')}\n`);
      }
      let notes = 0;
      for await (const line of lines(spools.notes)) await qualityHtml.write(`${notes++ ? '' : notesHead() + '\n'}${JSON.parse(line)}\n`);
      if (notes) await qualityHtml.write(notesEnd() + '\n');
      await qualityHtml.write(pageEnd(o.unmatched, o.quiet, o.broken));
      await qualityHtml.close();
    }
    // The digest goes first, so that outputs half put in place are never vouched for; renames need no space.
    o.replacing?.();
    await forgetDigest(digestPath);
    await changes?.forget();
    await commitAll([...outputs, ...trends]);
    // A spectra table left from a spec that had the section would be stale.
    if (names.spectra && !spectra) await rm(join(outDir, names.table('spectra')), { force: true });
    await changes?.done();
    const files = keptFiles(outDir, outputs);
    const digest = withChanges(basis, changes);
    // Kept only after the run's record: the outputs beside a digest file are one run's whole set, run.json with them.
    const reported = [...flagged].map(([k, severity]): ReportedFlag => { const [group, channel, flag] = k.split('\u0000'); return { group, channel, flag, severity }; });
    const keep = async () => {
      await keepDigest(digestPath, { digest, basis, run_id: o.runId, written: generated, files, quality: summary });
      if (qualityHtml) await keepReportedFlags(outDir, { reported });
    };
    return { quality: summary, rewritten: true, digest, writtenBy: o.runId, keep };
  } finally {
    // Changes still in the making when a write failed: their staged tables go too.
    if (changes == null) await settled().catch(() => null);
    for (const f of [...outputs, ...trends, ...Object.values(spools)]) await f.discard();
  }
}
