// The whole run on one screen: open (watch the storage, start the pool, declare, lock) → sweep → scan → choose the period
// → decide (reuse; captures still settling wait) → reduce (worker pool, in batches) → store (packs) → renew stale baselines
// → write (streamed, or left as they are when their digest says so) → report.
import { randomUUID } from 'node:crypto';
import { resolve } from 'node:path';
import { activeStages } from '../stages/index.js';
import { sweepSpools } from '../stages/read/mat-spool.js';
import { endRun } from './end-run.js';
import type { OutputsStand, StopTell } from './stop-on-signal.js';
import { openRun } from './open-run.js';
import { declarationsNow, groupKeys } from './plan/cache.js';
import { toolVersion } from './declare/package-files.js';
import { archiveChannels, selectorNotes, unwatchedFeatureNotes } from './declare/empty-selectors.js';
import { unfedGroupNote, unfedGroups } from './select/group-coverage.js';
import { brokenGroupsOf } from './outputs/broken-groups.js';
import { byRecording, FINAL_NAMES, partNames, writeOutputs } from './outputs/outputs.js';
import type { Progress } from './outputs/progress.js';
import type { QualitySummary } from './outputs/quality.js';
import { runLine, runRecord, writeRunRecord, type RunRecord } from './outputs/report.js';
import { writing } from './outputs/staged.js';
import { sweepLeftovers } from './outputs/sweep-leftovers.js';
import { planJob } from './plan/plan.js';
import { decide } from './plan/reuse.js';
import { leaveSettling } from './plan/settle.js';
import { decidedReducer } from './reduce/reduce-decided.js';
import { choosePeriod, leftOutOfScan, periodRecord, splitTaken } from './select/choose-period.js';
import { scan, type ScannedRecording } from './select/scan.js';
import { coverEnd } from './select/period-gap.js';
import { bookAfter } from './select/pending-late.js';
import { shardOf, type Shard } from './select/select.js';
import { Store } from './store/store.js';
import type { TrendsBasis, TrendsWrite } from './trends/trends.js';
import type { Renewed } from './trends/renew-for-period.js';

export interface ReduceOptions {
  archive: string;
  out?: string | null;
  spec?: string | null;
  jobs?: number;
  progress?: Progress;
  /** Recompute everything, reusing nothing. */
  force?: boolean;
  /** Identify recordings by a hash of their content, not only by size and modification time. */
  hash?: boolean;
  /** Reduce again the recordings whose stored entry is a failure. */
  retryFailed?: boolean;
  /** Reduce only this shard's share and write part files. */
  shard?: Shard | null;
  /** Only recordings starting in [since, until), ms since the epoch. */
  since?: number | null;
  until?: number | null;
  /** A lock held from another host and not refreshed for this long is taken over. */
  staleLockAfterMs?: number;
  /** A recording whose reduction makes no progress for this long fails, and the run goes on. */
  stallMs?: number;
  /** The run ends (the process killed) when the archive's or output folder's storage has not answered for this long. */
  storageMs?: number;
  /** Recordings to compute that were modified within this span before the scan are left to the next run (0: none). */
  settleMs?: number;
  /** Says why the run stopped (a signal, an error nothing waited for), with its exit code and the error's stack. */
  tell?: StopTell;
  /** Told where the outputs stand at every step (before, while put in place, after). */
  stand?: (stand: OutputsStand) => void;
  /** The command that runs this again, as given, for the lock and a shard's start (built from these options when absent). */
  command?: string;
}

/** The recordings of a shard's share in the archive that the run leaves out of its lines and of its settling (outside its period). */
function unselectedOf(recordings: ScannedRecording[], lines: { recording: string }[], shard: Shard, groupNames: string[]): { recording: string; group: string }[] {
  const inLines = new Set(lines.map((l) => l.recording));
  return recordings.filter((r) => shardOf(r.recording, shard.n) === shard.k && !inLines.has(r.recording)).map((r) => ({ recording: r.recording, group: groupNames[r.group] }));
}

export const defaultOut = (archive: string) => `${resolve(archive).replace(/[\\/]+$/, '')}.reduced`;

/** Loads the code that writes tables, trends and charts (Arrow, Parquet, Vega), which runs that write nothing never load. */
const loadWriters = () => Promise.all([import('./trends/trends.js'), import('./outputs/parquet-stream.js'), import('./outputs/report-changes.js'), import('./outputs/parquet-wasm.js').then((m) => m.parquetWasm())]);

/** The run's record and quality summary, and the worker threads it gave up for a stall (see end-despite-stuck-threads.ts). */
export async function runReduce(o: ReduceOptions): Promise<{ record: RunRecord; quality: QualitySummary; threadsGivenUp: number }> {
  const started = new Date();
  const clock = (t0: number) => (performance.now() - t0) / 1000;
  const root = resolve(o.archive);
  const outDir = resolve(o.out ?? defaultOut(o.archive));
  const runId = randomUUID();
  const shard = o.shard ?? null;

  let t = performance.now();
  const { storage, pool, firstRun, spec, declaration, trends, lock, stop } = await openRun(root, outDir, runId, { ...o, shard });
  let store: Store | null = null, failed = true;
  try {
    // What a run stopped while writing left under temporary names goes first.
    const leftovers = await sweepLeftovers(outDir, shard);
    // So are the temporary copies of compressed MAT-file variables that runs or threads since stopped left in TMPDIR.
    await sweepSpools();
    const scanStartedMs = Date.now();
    const scanned = await scan(root, declaration, { exclude: [outDir] });
    const unfed = unfedGroups(declaration.groups, scanned.recordings, declaration.lines);
    store = await Store.open(outDir, shard);
    const s = store;
    const stored = (r: string) => s.get(r) != null;
    const share = shard ? scanned.recordings.filter((r) => shardOf(r.recording, shard.n) === shard.k) : scanned.recordings;
    const period = await choosePeriod(share, declaration.groups, s, o.since, o.until);
    // A first run reduces every recording chosen: threads for them start now, while the decisions are made.
    // A broken group's recordings are set aside whole: neither reduced nor stored, so their stored results wait for it to be mended.
    const inBroken = (r: ScannedRecording) => declaration.groups[r.group].broken != null;
    const setAside = period.toDecide.filter(inBroken);
    const toDecide = setAside.length ? period.toDecide.filter((r) => !inBroken(r)) : period.toDecide;
    const broken = brokenGroupsOf(declaration, setAside);
    if (firstRun) void pool.prestart(toDecide.length);
    // How recordings are decided: the period's and late arrivals (--force applies to them), and later any baseline recording recomputed.
    const deciding = { version: toolVersion, keys: groupKeys(spec.spec, toolVersion), specHash: spec.hash, hash: o.hash, retryFailed: o.retryFailed };
    const planOf = (r: ScannedRecording) => planJob(r, declaration.groups, spec.spec);
    const decided = await decide(toDecide, planOf, s, { ...deciding, force: o.force });
    // Captures that may still be written wait for the next run.
    const { taken, settling } = leaveSettling(decided.decisions, declaration.groups.map((g) => g.name), o.settleMs);
    const { decisions, lateTaken, late } = splitTaken(period, taken, stored);
    const scanS = clock(t);

    t = performance.now();
    // Entries confirmed by content now are stored again as they are; the rest of the work goes to the pool in batches.
    await writing(s.own!, () => s.restamp(decisions.filter((d) => d.restamp).map((d) => ({ previous: d.previous!, identity: decided.identityOf(d), readAtMs: d.file.readAtMs }))));
    const todo = [...decisions, ...lateTaken].filter((d) => d.stores && !d.restamp);
    o.progress?.start(todo.filter((d) => d.compute.length > 0).length, decisions.length + lateTaken.length - todo.length);
    // New results mean new outputs: their writers' code loads while the workers reduce, not after.
    if (todo.length) loadWriters().catch(() => {}); // a failure shows where the code is used
    const reducer = decidedReducer(pool, s, o.stallMs);
    await reducer.reduce(todo, decided.itemOf, o.progress);
    o.progress?.stop();
    const reduceS = clock(t);
    // Whether every recording outside the period has a stored result now, late arrivals reduced included (then no run could form a baseline from more).
    const earlierStored = o.since != null && scanned.recordings.every((r) => period.inPeriod.has(r.recording) || stored(r.recording));

    t = performance.now();
    const groupNames = declaration.groups.map((g) => g.name);
    const labelsAt = declaration.groups.map((g) => g.labels);
    const labels = [...new Set(declaration.groups.flatMap((g) => Object.keys(g.labels)))];
    const metadata = { 'quern.version': toolVersion, 'quern.run_id': runId, 'quern.spec_hash': spec.hash, 'quern.spec': JSON.stringify(spec.spec), 'quern.archive': root };
    const items = byRecording(decisions.map((d) => ({ recording: d.recording, loc: s.get(d.recording)!, group: groupNames[d.group], labels: labelsAt[d.group] })));
    // The history of trends: the recordings in the archive now, whatever the period chose, under their groups' present names;
    // captures left to settle are absent from this run's outputs, and from the history too.
    const inArchive = new Map(scanned.recordings.map((r) => [r.recording, groupNames[r.group]]));
    const left = new Set(settling.map((x) => x.recording));
    const present = left.size ? new Map([...inArchive].filter(([r]) => !left.has(r))) : inArchive;
    // Trends need every shard's results: a shard leaves them (and spectra.parquet) to quern merge.
    const reduced = items.filter((it) => s.statusOf(it.recording) === 'reduced').map((it) => it.recording);
    // A broken group's stored history is left as it was: it has no declaration now to hold it against, nor one to recompute it under.
    const usable = scanned.recordings.filter((r) => !inBroken(r));
    const declarations = declarationsNow(usable, groupNames, planOf);
    const trendsInput = { trends, store: s, recordings: reduced, present, metadata, since: o.since ?? null, earlierStored, declarations };
    // A --since run (neither bounded by --until nor sharded) recomputes the stored recordings holding stale baseline places (another
    // version, other options, another declaration), so the baselines form again today, and then the stale nights a held verdict of
    // its period rests on through the deadband; a run with nothing stale reads the history once.
    let basis: TrendsBasis | undefined, renewed: Renewed | undefined;
    if (!shard && trends && o.since != null && o.until == null) {
      const { renewForPeriod } = await import('./trends/renew-for-period.js');
      ({ basis, renewed } = await renewForPeriod(outDir, spec.spec, trendsInput, trends, usable, (files) => decide(files, planOf, s, deciding), reducer.reduce));
    }
    // Their code (Arrow, Parquet, Vega) is loaded only here, by runs that write them. They are worked out on this thread
    // while the workers assemble the other tables' slices.
    const changes: Promise<TrendsWrite | null> | null = shard ? null : import('./trends/trends.js').then((m) => m.stageTrends(outDir, spec.spec, { ...trendsInput, basis }));
    const written = await writeOutputs(outDir, shard ? partNames(shard.k, shard.n) : FINAL_NAMES, { items, spec: spec.spec, labels, metadata, version: toolVersion, runId, archive: root, unmatched: scanned.unmatched, quiet: shard ? [] : period.quiet, broken, pool, changes, replacing: () => stop.now('replacing') });
    // The threads' memory goes back before run.json's lines are made.
    await pool.destroy();
    // Entries of recordings gone from the archive are dropped when the pack is rewritten (a shard's pack holds its share alone).
    const compacted = await writing(s.own!, () => s.compact(inArchive));
    const writeS = clock(t);

    const active = [...new Set(activeStages(spec.spec).map((x) => x.definition.group))];
    const declared = archiveChannels(declaration);
    const brokenNames = new Set(declaration.groups.filter((g) => g.broken).map((g) => g.name));
    const outcome = (r: string) => { const f = s.get(r)?.facts; return f && { status: f.status, reason: f.reason }; };
    const record = runRecord({
      runId, started, archive: root, out: outDir, spec, scanned: scanned.recordings.length, unmatched: scanned.unmatched,
      lines: decisions.map((d) => runLine(s.get(d.recording)!.facts, groupNames[d.group], d, active)), settling,
      declarationNotes: [...declaration.notes ?? [], ...selectorNotes(spec.spec, declared, spec.source), ...unwatchedFeatureNotes(spec.spec, trends, declared, spec.source), ...unfed.filter((u) => u.takenBy.length).map((u) => unfedGroupNote(u, undefined, brokenNames))], groupsWithoutRecordings: unfed.map((u) => u.group),
      brokenGroups: broken,
      // A shard's present recordings outside its period: merge's trends read their stored history too.
      ...(shard ? { unselected: unselectedOf(scanned.recordings, [...decisions, ...settling], shard, groupNames), coveredUntil: new Date(coverEnd(scanStartedMs, o.until ?? null)).toISOString() } : {}),
      timings: { scan_s: scanS, reduce_s: reduceS, write_s: writeS }, shard, labels, labelsByGroup: Object.fromEntries(declaration.groups.map((g) => [g.name, g.labels])),
      period: periodRecord(period, late, groupNames, shard, outcome, renewed),
      damage: s.damage, cutShort: s.cutShort, compacted, outputs: { rewritten: written.rewritten, digest: written.digest, written_by_run: written.writtenBy }, tookOver: lock.tookOver, leftovers,
    });
    await writeRunRecord(outDir, shard ? `parts/run-${shard.k}-of-${shard.n}.json` : 'run.json', record);
    await written.keep();
    stop.now(written.rewritten ? 'written' : 'unchanged');
    // The late arrivals no finished run's tables hold: this run's added, those its own tables hold taken off (a shard's count once merged).
    const tables = shard ? null : { from: o.since ?? -Infinity, to: coverEnd(scanStartedMs, o.until ?? null) };
    const lateBook = bookAfter(period.book, late.map((l) => ({ recording: l.file.recording, start: l.start })), (r) => (inArchive.has(r) ? period.startsNow.get(r) ?? null : undefined), scanStartedMs, tables);
    await writing(s.own!, () => s.markScanned(scanStartedMs, leftOutOfScan(share, stored, period, late, [...left, ...setAside.map((r) => r.recording)]), o.since ?? null, o.until ?? null, lateBook));
    failed = false;
    return { record, quality: written.quality, threadsGivenUp: reducer.threadsGivenUp() };
  } finally {
    // Copies a thread stopped for a stall, or one that crashed, left behind: no thread of this run reads them any more.
    await endRun([() => pool.destroy(), () => sweepSpools(undefined, { own: true }), () => store?.close(), stop.off, lock.release, storage.stop], failed);
  }
}
