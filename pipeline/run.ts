// The whole run on one screen: lock (removing what a stopped run left) → declare → scan → select → plan → decide (reuse; captures still settling wait) → reduce (worker pool, in batches)
// → store (packs) → write (streamed, or left as they are when their digest says so) → report.
import { randomUUID } from 'node:crypto';
import { existsSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { activeStages } from '../stages/index.js';
import { declarationKey, groupKeys } from './plan/cache.js';
import { loadArchiveDeclaration, loadSpec } from './declare/declare.js';
import { quantityUses } from './declare/quantity-uses.js';
import { unfedGroupNote, unfedGroups } from './select/group-coverage.js';
import { lockPath, takeLock } from './outputs/lock.js';
import { byRecording, FINAL_NAMES, partNames, writeOutputs } from './outputs/outputs.js';
import { reservedColumnNames } from './outputs/output-tables.js';
import { toolVersion } from './declare/package-files.js';
import { planJob } from './plan/plan.js';
import { openPool, reduceAll } from './reduce/pool.js';
import { watchStorage } from './reduce/storage-watch.js';
import type { Progress } from './outputs/progress.js';
import type { QualitySummary } from './outputs/quality.js';
import { runLine, runRecord, writeRunRecord, type RunRecord } from './outputs/report.js';
import { writing } from './outputs/staged.js';
import { sweepLeftovers } from './outputs/sweep-leftovers.js';
import { sweepSpools } from '../stages/read/mat-spool.js';
import { decide, type Decided, type Decision } from './plan/reuse.js';
import { leaveSettling } from './plan/settle.js';
import { refuseHidingRecordings, scan, type ScannedRecording } from './select/scan.js';
import { byStartTime, shardOf, type CaptureDue, type QuietGroup, type Shard } from './select/select.js';
import { arrivalsBefore, lateArrivalsRecord } from './select/late-arrivals.js';
import { Store } from './store/store.js';
import { trendOptions } from './trends/options.js';
import type { TrendsBasis, TrendsWrite } from './trends/trends.js';
import type { RecomputedForBaselines } from './trends/renew-baselines.js';
import type { RecomputedForHolds } from './trends/carry-holds.js';

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
  // Storage that stops answering ends the run rather than hold its lock for ever.
  const storage = watchStorage([root, outDir], o.storageMs ?? 5 * 60_000);
  const pool = openPool(o.jobs);
  // A first run into an output folder reduces and writes, so its first thread starts now, loading its modules while this
  // thread reads the declarations and scans (a quarter of a second of a small run's start); later runs start them on demand.
  const firstRun = !existsSync(join(outDir, 'cache'));
  // Waiting for the pool's code here (tens of ms) lets the thread start before the declarations are read, not after.
  if (firstRun) await pool.prestart(1);
  let declaration, spec, trends, lock;
  try {
    spec = await loadSpec(root, o.spec);
    declaration = await loadArchiveDeclaration(root, reservedColumnNames(spec.spec), quantityUses(spec.spec));
    trends = trendOptions(spec.spec); // checked now, before any work
    await refuseHidingRecordings(root, outDir, declaration);
    lock = await takeLock(lockPath(outDir, shard), { run_id: runId, command: `quern reduce ${root} --out ${outDir}${shard ? ` --shard ${shard.k}/${shard.n}` : ''}${o.force ? ' --force' : ''}${o.since != null ? ` --since ${new Date(o.since).toISOString()}` : ''}${o.until != null ? ` --until ${new Date(o.until).toISOString()}` : ''}` }, { staleAfterMs: o.staleLockAfterMs });
  } catch (e) {
    await pool.destroy();
    storage.stop();
    throw e;
  }
  let store: Store | null = null;
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
    const share = shard ? scanned.recordings.filter((r) => shardOf(r.recording, shard.n) === shard.k) : scanned.recordings;
    let chosen = share, starts: number[] = [];
    let quiet: QuietGroup[] = [], due: CaptureDue[] = [];
    if (o.since != null || o.until != null) ({ chosen, quiet, due, starts } = await byStartTime(share, declaration.groups, (r) => s.knownStart(r), o.since ?? -Infinity, o.until ?? Infinity));
    const inPeriod = new Set(chosen.map((r) => r.recording));
    // Recordings before the period that came in since the previous run looked (an older night copied in late) are found from
    // the starts just taken; without --until they are decided too, and reduced where that has work, for the trends' history alone.
    const arrived = o.since != null ? arrivalsBefore(share, starts, o.since, await s.scanMarks(), (r) => s.get(r) != null) : [];
    const reduceLate = o.until == null;
    const toDecide = reduceLate && arrived.length ? [...chosen, ...arrived.map((l) => l.file)] : chosen;
    // A first run reduces every recording chosen: threads for them start now, while the decisions are made.
    if (firstRun) void pool.prestart(toDecide.length);
    const keys = groupKeys(spec.spec, toolVersion);
    // How recordings are decided: the period's and late arrivals (--force applies to them), and later any baseline recording recomputed.
    const deciding = { version: toolVersion, keys, specHash: spec.hash, hash: o.hash, retryFailed: o.retryFailed };
    const planOf = (r: ScannedRecording) => planJob(r, declaration.groups, spec.spec);
    const decided = await decide(toDecide, planOf, s, { ...deciding, force: o.force });
    const { itemOf, identityOf } = decided;
    // Captures that may still be written wait for the next run.
    const { taken, settling } = leaveSettling(decided.decisions, declaration.groups.map((g) => g.name), o.settleMs);
    // The period's decisions make its tables and lines; the late arrivals taken are reduced and stored beside them.
    const decisions = toDecide === chosen ? taken : taken.filter((d) => inPeriod.has(d.recording));
    const lateTaken = toDecide === chosen ? [] : taken.filter((d) => !inPeriod.has(d.recording) && d.stores);
    // Late arrivals: those with work to do (new, changed, or to be tried again); with --until, those with no stored result.
    const startOf = new Map(arrived.map((l) => [l.file.recording, l.start]));
    const late = reduceLate
      ? lateTaken.map((d) => ({ file: d.file, start: startOf.get(d.recording)! }))
      : arrived.filter((l) => s.get(l.file.recording) == null);
    const scanS = clock(t);

    t = performance.now();
    // Entries confirmed by content now are stored again as they are; the rest of the work goes to the pool in batches.
    await writing(s.own!, () => s.restamp(decisions.filter((d) => d.restamp).map((d) => ({ previous: d.previous!, identity: identityOf(d), readAtMs: d.file.readAtMs }))));
    const todo = [...decisions, ...lateTaken].filter((d) => d.stores && !d.restamp);
    o.progress?.start(todo.filter((d) => d.compute.length > 0).length, decisions.length + lateTaken.length - todo.length);
    // New results mean new outputs: their writers' code loads while the workers reduce, not after.
    if (todo.length) loadWriters().catch(() => {}); // a failure shows where the code is used
    let threadsGivenUp = 0;
    const reduceDecided = async (work: Decision[], itemOfWork: Decided['itemOf'], told: Progress | undefined) => {
      threadsGivenUp += (await reduceAll(pool, work, {
        stallMs: o.stallMs,
        sizeOf: (d) => d.file.size,
        itemOf: itemOfWork,
        onBatch: async (results, batch) => {
          // Stored at once, a batch a write: a run killed later keeps this work.
          await writing(s.own!, () => s.append(results));
          // Results come back in the batch's order.
          results.forEach((r, i) => {
            const d = batch[i];
            if (d.compute.length) told?.done(r.facts, d.reused.length ? `(recomputed ${d.compute.join(', ')}; reused the rest)` : undefined);
          });
        },
      })).threadsGivenUp;
    };
    await reduceDecided(todo, itemOf, o.progress);
    o.progress?.stop();
    const reduceS = clock(t);
    // Whether every recording outside the period has a stored result now, late arrivals reduced included (then no run could form a baseline from more).
    const earlierStored = o.since != null && scanned.recordings.every((r) => inPeriod.has(r.recording) || s.get(r.recording) != null);

    t = performance.now();
    const labelsOf = new Map(declaration.groups.map((g) => [g.name, g.labels]));
    const labelsAt = declaration.groups.map((g) => g.labels);
    const labels = [...new Set(declaration.groups.flatMap((g) => Object.keys(g.labels)))];
    const metadata = { 'quern.version': toolVersion, 'quern.run_id': runId, 'quern.spec_hash': spec.hash, 'quern.spec': JSON.stringify(spec.spec), 'quern.archive': root };
    const groupNames = declaration.groups.map((g) => g.name);
    const items = byRecording(decisions.map((d) => ({ recording: d.recording, loc: s.get(d.recording)!, group: groupNames[d.group], labels: labelsAt[d.group] })));
    // The history of trends: the recordings in the archive now, whatever the period chose, under their groups' present names;
    // captures left to settle are absent from this run's outputs, and from the history too.
    const inArchive = new Map(scanned.recordings.map((r) => [r.recording, groupNames[r.group]]));
    const left = new Set(settling.map((x) => x.recording));
    const present = left.size ? new Map([...inArchive].filter(([r]) => !left.has(r))) : inArchive;
    // Trends need every shard's results: a shard leaves them (and spectra.parquet) to quern merge.
    const reduced = items.filter((it) => s.statusOf(it.recording) === 'reduced').map((it) => it.recording);
    // Their code (Arrow, Parquet, Vega) is loaded only here, by runs that write them. They are worked out on this thread
    // while the workers assemble the other tables' slices.
    // Each group's declaration now (as deciding keys it): an entry stored under a former one is no figure of the same measurement.
    const declarations = new Map<string, ReadonlySet<string>>();
    for (const r of scanned.recordings) if (!declarations.has(groupNames[r.group])) declarations.set(groupNames[r.group], new Set([declarationKey(planOf(r))]));
    const trendsInput = { trends, store: s, recordings: reduced, present, metadata, since: o.since ?? null, earlierStored, declarations };
    // A --since run (neither bounded by --until nor sharded) recomputes the stored recordings holding stale baseline places (another
    // version, other options, another declaration), so the baselines form again today; a run with nothing stale reads the history once.
    let basis: TrendsBasis | undefined, renewed: RecomputedForBaselines | undefined, heldCarried: RecomputedForHolds | undefined;
    if (!shard && trends && o.since != null && o.until == null) {
      const [{ trendsBasis }, { renewStaleBaselines, recomputedRecord }] = await Promise.all([import('./trends/trends.js'), import('./trends/renew-baselines.js')]);
      const scannedAs = new Map(scanned.recordings.map((r) => [r.recording, r]));
      const whyOf = new Map<string, string>();
      const read = () => trendsBasis(outDir, spec.spec, trendsInput, true), recompute = async (names: string[]) => {
        const again = await decide(names.flatMap((r) => scannedAs.get(r) ?? []), planOf, s, deciding);
        for (const d of again.decisions) whyOf.set(d.recording, d.why);
        await reduceDecided(again.decisions.filter((d) => d.stores && !d.restamp), again.itemOf, undefined);
      };
      const found = await renewStaleBaselines(read, recompute, trends);
      // Then the stale recordings the period's deadband holds rest on (pipeline/trends/carry-holds.ts).
      const { carryHolds, carriedRecord } = await import('./trends/carry-holds.js'), carried = await carryHolds(found.basis, read, recompute, trends);
      basis = carried.basis;
      const outcomeOf = (r: string) => { const f = s.get(r)?.facts; return { group: inArchive.get(r)!, why: whyOf.get(r) ?? '', ...(f ? { status: f.status, ...(f.reason ? { reason: f.reason } : {}) } : {}) }; };
      renewed = recomputedRecord(found.recomputed, outcomeOf);
      heldCarried = carriedRecord(carried.recomputed, outcomeOf);
    }
    const changes: Promise<TrendsWrite | null> | null = shard ? null : import('./trends/trends.js').then((m) => m.stageTrends(outDir, spec.spec, { ...trendsInput, basis }));
    const written = await writeOutputs(outDir, shard ? partNames(shard.k, shard.n) : FINAL_NAMES, { items, spec: spec.spec, labels, metadata, version: toolVersion, runId, archive: root, unmatched: scanned.unmatched, quiet: shard ? [] : quiet, pool, changes });
    // The threads' memory goes back before run.json's lines are made.
    await pool.destroy();
    // Entries of recordings gone from the archive are dropped when the pack is rewritten (a shard's pack holds its share alone).
    const compacted = await writing(s.own!, () => s.compact(inArchive));
    const writeS = clock(t);

    const active = [...new Set(activeStages(spec.spec).map((x) => x.definition.group))];
    const record = runRecord({
      runId, started, archive: root, out: outDir, spec, scanned: scanned.recordings.length, unmatched: scanned.unmatched,
      lines: decisions.map((d) => runLine(s.get(d.recording)!.facts, groupNames[d.group], d, active)), settling,
      declarationNotes: [...declaration.notes ?? [], ...unfed.filter((u) => u.takenBy.length).map((u) => unfedGroupNote(u))], groupsWithoutRecordings: unfed.map((u) => u.group),
      // A shard's present recordings outside its period: merge's trends read their stored history too.
      ...(shard ? { unselected: unselectedOf(scanned.recordings, [...decisions, ...settling], shard, groupNames) } : {}),
      timings: { scan_s: scanS, reduce_s: reduceS, write_s: writeS }, shard, labels, labelsByGroup: Object.fromEntries(labelsOf),
      // A shard sees part of each group: merge judges declared capture intervals from every shard's latest start.
      period: o.since != null || o.until != null ? {
        since: o.since ?? null, until: o.until ?? null, selected: chosen.length, quiet_groups: quiet, ...(shard && due.length ? { capture_due: due } : {}),
        // Those left to settle are named there, and are late arrivals again for the next run.
        ...(o.since != null ? { late_arrivals: lateArrivalsRecord(late, groupNames, reduceLate, (r) => { const f = s.get(r)?.facts; return f && { status: f.status, reason: f.reason }; }) } : {}),
        ...(renewed ? { recomputed_for_baselines: renewed } : {}), ...(heldCarried ? { recomputed_for_held_changes: heldCarried } : {}),
      } : null,
      damage: s.damage, compacted, outputs: { rewritten: written.rewritten, digest: written.digest, written_by_run: written.writtenBy }, tookOver: lock.tookOver, leftovers,
    });
    await writeRunRecord(outDir, shard ? `parts/run-${shard.k}-of-${shard.n}.json` : 'run.json', record);
    // What this run saw and left without a stored result, for the next run's late arrivals; not those it left to a later
    // run (late arrivals named but not reduced under --until, captures left to settle), which must stay late.
    const notYet = new Set([...(reduceLate ? [] : late.map((l) => l.file.recording)), ...left]);
    const leftOut = share.filter((r) => s.get(r.recording) == null && !notYet.has(r.recording)).map((r) => r.recording);
    await writing(s.own!, () => s.markScanned(scanStartedMs, leftOut));
    return { record, quality: written.quality, threadsGivenUp };
  } finally {
    await pool.destroy();
    // Copies a thread stopped for a stall, or one that crashed, left behind: no thread of this run reads them any more.
    await sweepSpools(undefined, { own: true });
    await store?.close();
    await lock.release();
    storage.stop();
  }
}
