// quern merge: combines the part files that shards wrote into one output folder, exactly as one process would have written it.
// The recordings' entries are read from every shard's pack and the tables streamed out as reduce writes them.
import { randomUUID } from 'node:crypto';
import { readdir, readFile } from 'node:fs/promises';
import { join, resolve } from 'node:path';
import { activeStages } from '../../stages/index.js';
import { canonicalJson } from '../declare/canonical-json.js';
import type { LoadedSpec } from '../declare/declare.js';
import type { ReductionSpec } from '../../spec/reduction.js';
import { describeHolder, heldShardLocks, lockPath, takeLock } from '../outputs/lock.js';
import { watchStorage } from '../reduce/storage-watch.js';
import { byRecording, FINAL_NAMES, writeOutputs } from '../outputs/outputs.js';
import { removeOwnTemporaries, sweepLeftovers } from '../outputs/sweep-leftovers.js';
import { endRun } from '../end-run.js';
import { followed, stopOnSignal, type OutputsStand } from '../stop-on-signal.js';
import { toolVersion } from '../declare/package-files.js';
import type { QualitySummary } from '../outputs/quality.js';
import { openPool } from '../reduce/pool.js';
import { runLine, runRecord, writeRunRecord, type RunRecord } from '../outputs/report.js';
import { UsageError } from '../declare/yaml-file.js';
import { mergeCommand } from '../rerun-command.js';
import { arrivalsDuringShards, scannedOverall } from './arrivals.js';
import { currentCount, missingShards, specProblem, staleCountProblem, unfinishedShards, versionProblem } from './shard-parts.js';
import { keepMergeCover, keepMergeLate, Store } from '../store/store.js';
import { bookAfter } from '../select/pending-late.js';
import { trendOptions } from '../trends/options.js';
import { stageTrends } from '../trends/trends.js';
import { quietByCadence, shardOf, type CaptureDue, type QuietGroup } from '../select/select.js';
import { combinedLateArrivals, type LateArrivals } from '../select/late-arrivals.js';
import { combinedGap } from '../select/period-gap.js';

export async function runMerge(out: string, { jobs, storageMs = 5 * 60_000, stand, command }: { jobs?: number; storageMs?: number; stand?: (stand: OutputsStand) => void; /** The command that runs this merge again, for its lock (`mergeCommand`). */ command?: string } = {}): Promise<{ record: RunRecord; quality: QualitySummary }> {
  const started = new Date();
  const outDir = resolve(out);
  const partsDir = join(outDir, 'parts');
  const names = (await readdir(partsDir).catch(() => [] as string[])).filter((f) => /^run-\d+-of-\d+\.json$/.test(f));
  if (!names.length) throw new UsageError(`${partsDir}: no part files (run-K-of-N.json); run quern reduce with --shard K/N into ${outDir} first`);
  const running = await heldShardLocks(outDir);
  if (running.length) throw new UsageError(`${partsDir}: cannot merge while shards are still running: ${running.map(describeHolder).join('; ')}; merge once they have finished`);
  const all: RunRecord[] = await Promise.all(names.map(async (f) => JSON.parse(await readFile(join(partsDir, f), 'utf8'))));
  // Parts of an older shard count are named as stale; the newest part's count is the one merged.
  const n = currentCount(all);
  const parts = all.filter((p) => p.shard?.n === n);
  const problems: string[] = [];
  const staleCount = staleCountProblem(all);
  if (staleCount) problems.push(staleCount);
  problems.push(...await missingShards(outDir, n, parts));
  problems.push(...await unfinishedShards(outDir, parts));
  const versions = versionProblem(parts, toolVersion);
  if (versions) problems.push(versions);
  const specs = specProblem(parts);
  if (specs) problems.push(specs);
  if (new Set(parts.map((p) => p.archive)).size > 1) problems.push('the parts come from different archives');
  if (problems.length) throw new UsageError(`${partsDir}: cannot merge: ${problems.join('; ')}`);
  parts.sort((a, b) => a.shard!.k - b.shard!.k);

  const first = parts[0];
  const spec = first.spec.value as ReductionSpec;
  const runId = randomUUID();
  // Storage that stops answering ends the merge rather than hold its lock for ever.
  const storage = watchStorage([outDir], storageMs);
  // The stop goes first and is handed the lock's release as the lock file is created: no moment between them leaves it behind.
  let releaseLock = () => {};
  const stop = followed(stopOnSignal(() => { removeOwnTemporaries(outDir, null); releaseLock(); }, (message, _code, details) => { process.stderr.write(`quern: ${message}\n${details?.stack ? `${details.stack}\n` : ''}`); }), stand);
  const lock = await takeLock(lockPath(outDir, null), { run_id: runId, command: command ?? mergeCommand(outDir) }, { claimed: (release) => { releaseLock = release; } }).catch((e) => { stop.off(); storage.stop(); throw e; });
  const pool = openPool(jobs);
  let failed = true;
  try {
    const leftovers = await sweepLeftovers(outDir, null);
    const store = await Store.open(outDir);
    const listed = byRecording(parts.flatMap((p) => p.recordings));
    const items = listed.map((r) => {
      const loc = store.get(r.recording);
      if (!loc) throw new UsageError(`${outDir}: the stored result of ${r.recording} is missing from cache/ or damaged; run its shard again`);
      return { recording: r.recording, loc, group: r.group, labels: first.labels_by_group[r.group] ?? {} };
    });
    const metadata = { 'quern.version': toolVersion, 'quern.run_id': runId, 'quern.spec_hash': first.spec.hash, 'quern.spec': JSON.stringify(spec), 'quern.archive': first.archive };
    const unmatched = first.unmatched.map((u) => u.path);
    const reduced = items.filter((it) => it.loc.facts.status === 'reduced').map((it) => it.recording);
    // A broken group's recordings were set aside by every shard (each counting its share); its stored history is left as it was.
    const brokenGroups = (first.broken_groups ?? []).map((b) => ({ ...b, recordings: parts.reduce((n, p) => n + (p.broken_groups?.find((x) => x.group === b.group)?.recordings ?? 0), 0) }));
    const broken = new Set(brokenGroups.map((b) => b.group));
    // Worked out on this thread while the workers assemble the slices.
    const changes = stageTrends(outDir, spec, { trends: trendOptions(spec), store, recordings: reduced, present: presentOverall(parts, store), metadata, since: first.period?.since ?? null, declarations: declarationsOfRun(items.filter((it) => !broken.has(it.group))) });
    const quiet = quietOverall(parts, listed);
    // Recordings that came in between the shards' scans: no shard reduced them, so they are named.
    const arrived = await arrivalsDuringShards(parts, spec, outDir);
    const written = await writeOutputs(outDir, FINAL_NAMES, { items, spec, labels: first.label_columns, metadata, version: toolVersion, runId, archive: first.archive, unmatched, quiet, broken: brokenGroups, pool, changes, replacing: () => stop.now('replacing') });
    const loaded: LoadedSpec = { spec, source: first.spec.source, text: canonicalJson(spec), hash: first.spec.hash };
    const active = [...new Set(activeStages(spec).map((x) => x.definition.group))];
    const record = runRecord({
      runId, started, archive: first.archive, out: outDir, spec: loaded, scanned: scannedOverall(parts), unmatched,
      lines: listed.map((r, i) => runLine(items[i].loc.facts, r.group, { compute: r.recomputed, reused: r.reused, why: r.why }, active)),
      settling: parts.flatMap((p) => p.settling ?? []), // parts written before the settle span have none
      // Every shard scans the whole archive: the first part's say for all.
      declarationNotes: first.declaration_notes ?? [], groupsWithoutRecordings: first.groups_without_recordings ?? [],
      brokenGroups,
      timings: { scan_s: Math.max(...parts.map((p) => p.timings.scan_s)), reduce_s: Math.max(...parts.map((p) => p.timings.reduce_s)), write_s: (Date.now() - started.getTime()) / 1000 },
      shard: null, labels: first.label_columns, labelsByGroup: first.labels_by_group, period: first.period ? { ...first.period, selected: parts.reduce((n, p) => n + (p.period?.selected ?? 0), 0), quiet_groups: quiet, ...lateArrivalsOverall(parts), ...gapOverall(parts) } : null,
      damage: store.damage, cutShort: store.cutShort, compacted: false, outputs: { rewritten: written.rewritten, digest: written.digest, written_by_run: written.writtenBy }, tookOver: lock.tookOver, leftovers,
      merged: { shards: n, arrived_during_shards: arrived },
    });
    await writeRunRecord(outDir, 'run.json', record);
    await written.keep();
    stop.now(written.rewritten ? 'written' : 'unchanged');
    // What the merged tables hold: from the parts' latest --since to the earliest end among them (parts written before they kept it: nothing said).
    if (parts.every((p) => p.covered_until)) {
      const from = Math.max(...parts.map((p) => p.period?.since ?? -Infinity)), to = Math.min(...parts.map((p) => Date.parse(p.covered_until!)));
      await keepMergeCover(outDir, from, to);
      // The late arrivals the merged tables do not hold, as of this merge: the shards' lists, those the tables hold taken off.
      const present = presentOverall(parts, store);
      await keepMergeLate(outDir, bookAfter((await store.scanMarks()).late, [], (r) => (present.has(r) ? null : undefined), started.getTime(), { from, to }));
    }
    failed = false;
    return { record, quality: written.quality };
  } finally {
    await endRun([() => pool.destroy(), stop.off, lock.release, storage.stop], failed);
  }
}

/**
 * Each group's declaration as the shards held it: merge reads no archive.yaml, but every recording a shard selected was
 * reused or reduced again under the declaration it read, so the keys of this run's entries are the present ones. A group
 * none of whose recordings the shards selected has no rows in this run's trends and is not checked.
 */
function declarationsOfRun(items: { group: string; loc: { facts: { declKey: string } } }[]): Map<string, Set<string>> {
  const declarations = new Map<string, Set<string>>();
  for (const it of items) (declarations.get(it.group) ?? declarations.set(it.group, new Set()).get(it.group)!).add(it.loc.facts.declKey);
  return declarations;
}

/**
 * The recordings in the archive as the shards found them, under their groups' names then: each part's lines and the
 * recordings of its share it left out. A part written before it kept those gives every stored entry of its share.
 */
function presentOverall(parts: RunRecord[], store: Store): Map<string, string> {
  const present = new Map<string, string>();
  for (const p of parts) {
    for (const r of p.recordings) present.set(r.recording, r.group);
    if (p.unselected) for (const r of p.unselected) present.set(r.recording, r.group);
    else for (const r of store.entries.keys()) if (!present.has(r) && shardOf(r, p.shard!.n) === p.shard!.k) present.set(r, store.get(r)!.group);
  }
  return present;
}

/** Every shard's gap before the period as one: the recordings no finished shard's run covered (none when no shard found one). */
function gapOverall(parts: RunRecord[]): { gap?: NonNullable<ReturnType<typeof combinedGap>> } {
  const gap = combinedGap(parts.map((p) => p.period?.gap));
  return gap ? { gap } : {};
}

/** Every shard's late arrivals as one (none when the shards kept none). */
function lateArrivalsOverall(parts: RunRecord[]): { late_arrivals?: LateArrivals } {
  const late = combinedLateArrivals(parts.map((p) => p.period?.late_arrivals));
  return late ? { late_arrivals: late } : {};
}

/**
 * The groups quiet in the whole archive. A group that declares capture_every: the latest start before the period's end any
 * shard saw, against the earliest time one was due. Any other: quiet in some shard and chosen in none, the latest start the
 * latest any shard saw; exact without --until, while with it a shard cannot tell a group it did not see from one seen only
 * after the period, so none is said.
 */
function quietOverall(parts: RunRecord[], listed: { group: string }[]): QuietGroup[] {
  const due = new Map<string, CaptureDue>();
  for (const d of parts.flatMap((p) => p.period?.capture_due ?? [])) {
    const was = due.get(d.group);
    due.set(d.group, !was ? d : { ...was, latest_start: [was.latest_start, d.latest_start].reduce((a, b) => (b != null && (a == null || b > a) ? b : a)), due: d.due < was.due ? d.due : was.due });
  }
  const chosen = new Set(listed.map((r) => r.group)), latest = new Map<string, string>();
  if (parts[0].period?.until == null) {
    for (const g of parts.flatMap((p) => p.period?.quiet_groups ?? [])) if (g.latest_start != null && !due.has(g.group) && !chosen.has(g.group) && !(g.latest_start <= (latest.get(g.group) ?? ''))) latest.set(g.group, g.latest_start);
  }
  return [...[...latest].map(([group, latest_start]) => ({ group, latest_start })), ...quietByCadence([...due.values()])].sort((a, b) => a.group.localeCompare(b.group));
}
