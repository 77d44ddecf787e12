// The whole run on one screen: declare → scan → select → plan → decide (reuse) → reduce (worker pool) → store → write → report.
import { randomUUID } from 'node:crypto';
import { mkdir } from 'node:fs/promises';
import { join, resolve } from 'node:path';
import { writeFileAtomic } from './outputs/atomic.js';
import { groupKeys, writeEntry, type CacheEntry } from './plan/cache.js';
import { loadArchiveDeclaration, loadSpec } from './declare/declare.js';
import { FINAL_NAMES, partNames, writeOutputs } from './outputs/outputs.js';
import { loadParquetWriter } from './outputs/parquet.js';
import { toolVersion } from './declare/package-files.js';
import { plan } from './plan/plan.js';
import { reduceAll } from './reduce/pool.js';
import type { Progress } from './outputs/progress.js';
import type { QualityReport } from './outputs/quality.js';
import { assembleRecording } from './reduce/assemble.js';
import { runRecord, type RunRecord } from './outputs/report.js';
import { decide, mergeEntry } from './plan/reuse.js';
import { scan } from './select/scan.js';
import { byStartTime, shardOf, updateIndex, type Shard } from './select/select.js';

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
  /** Reduce only this shard's share and write part files. */
  shard?: Shard | null;
  /** Only recordings starting in [since, until), ms since the epoch. */
  since?: number | null;
  until?: number | null;
}

export const defaultOut = (archive: string) => `${resolve(archive).replace(/[\\/]+$/, '')}.reduced`;

export async function runReduce(o: ReduceOptions): Promise<{ record: RunRecord; quality: QualityReport }> {
  const started = new Date();
  const clock = (t0: number) => (performance.now() - t0) / 1000;
  const root = resolve(o.archive);
  const outDir = resolve(o.out ?? defaultOut(o.archive));
  const runId = randomUUID();

  let t = performance.now();
  const declaration = await loadArchiveDeclaration(root);
  const spec = await loadSpec(root, o.spec);
  const scanned = await scan(root, declaration, { exclude: [outDir] });
  let chosen = o.shard ? scanned.recordings.filter((r) => shardOf(r.recording, o.shard!.n) === o.shard!.k) : scanned.recordings;
  if (o.since != null || o.until != null) chosen = await byStartTime(chosen, declaration.groups, outDir, o.since ?? -Infinity, o.until ?? Infinity);
  const keys = groupKeys(spec.spec, toolVersion);
  const reuse = { out: outDir, version: toolVersion, keys, specHash: spec.hash, force: o.force, hash: o.hash };
  const decisions = await decide(plan(chosen, declaration.groups, spec.spec), reuse);
  const scanS = clock(t);

  t = performance.now();
  await mkdir(outDir, { recursive: true });
  const todo = decisions.filter((d) => d.compute.length > 0);
  const entries = new Map<string, CacheEntry>(decisions.filter((d) => d.compute.length === 0).map((d) => [d.job.recording, mergeEntry(d, null, reuse)]));
  o.progress?.start(todo.length, entries.size);
  void loadParquetWriter(); // loads while the workers reduce
  const byName = new Map(todo.map((d) => [d.job.recording, d]));
  await reduceAll(todo.map((d) => d.job), {
    jobs: o.jobs,
    onResult: async (fresh) => {
      const d = byName.get(fresh.recording)!;
      const entry = mergeEntry(d, fresh, reuse);
      // Stored at once, atomically: a run killed later keeps this recording's work.
      await writeEntry(outDir, entry);
      entries.set(fresh.recording, entry);
      o.progress?.done(fresh, d.reused.length ? `(recomputed ${d.compute.join(', ')}; reused the rest)` : undefined);
    },
  });
  o.progress?.stop();
  const reduceS = clock(t);

  t = performance.now();
  const labelsOf = new Map(declaration.groups.map((g) => [g.name, g.labels]));
  const results = decisions.map((d) => assembleRecording(entries.get(d.job.recording)!, labelsOf.get(d.job.group) ?? {}, spec.spec));
  const labels = [...new Set(declaration.groups.flatMap((g) => Object.keys(g.labels)))];
  const metadata = { 'quern.version': toolVersion, 'quern.run_id': runId, 'quern.spec_hash': spec.hash, 'quern.spec': JSON.stringify(spec.spec), 'quern.archive': root };
  const names = o.shard ? partNames(o.shard.k, o.shard.n) : FINAL_NAMES;
  const quality = await writeOutputs(outDir, names, { results, spec: spec.spec, labels, metadata, version: toolVersion, runId, archive: root, unmatched: scanned.unmatched });
  const scannedByName = new Map(chosen.map((r) => [r.recording, r]));
  await updateIndex(outDir, o.shard ?? null, decisions.map((d) => {
    const s = scannedByName.get(d.job.recording)!, start = entries.get(d.job.recording)?.base?.header.start_time;
    return { recording: d.job.recording, size: s.size, mtimeMs: s.mtimeMs, start_ms: start ? Date.parse(start) : s.mtimeMs };
  }));
  const writeS = clock(t);

  const record = runRecord({
    runId, started, archive: root, out: outDir, spec, scanned: scanned.recordings.length, unmatched: scanned.unmatched, results, decisions,
    timings: { scan_s: scanS, reduce_s: reduceS, write_s: writeS },
    shard: o.shard ?? null, labels, labelsByGroup: Object.fromEntries(labelsOf),
    period: o.since != null || o.until != null ? { since: o.since ?? null, until: o.until ?? null, selected: chosen.length } : null,
  });
  await writeFileAtomic(join(outDir, o.shard ? `parts/run-${o.shard.k}-of-${o.shard.n}.json` : 'run.json'), JSON.stringify(record, null, 2) + '\n');
  return { record, quality };
}
