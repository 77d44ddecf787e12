// The whole run on one screen: declare → scan → plan → reduce (worker pool) → write → report.
import { randomUUID } from 'node:crypto';
import { mkdir } from 'node:fs/promises';
import { join, resolve } from 'node:path';
import { featureColumns } from '../stages/index.js';
import { writeFileAtomic } from './atomic.js';
import { loadArchiveDeclaration, loadSpec } from './declare.js';
import { toolVersion } from './package-files.js';
import { plan } from './plan.js';
import { qualityReport, type QualityReport } from './quality.js';
import { qualityHtml } from './report-html.js';
import { reduceAll } from './pool.js';
import type { Progress } from './progress.js';
import type { RecordingResult } from './reduce.js';
import { runRecord, type RunRecord } from './report.js';
import { scan } from './scan.js';
import { IDENTITY_COLUMNS, QUALITY_COLUMNS, WINDOW_TABLE, writeParquetTable, type TableColumn } from './write.js';

export interface ReduceOptions {
  archive: string;
  out?: string | null;
  spec?: string | null;
  jobs?: number;
  progress?: Progress;
}

export const defaultOut = (archive: string) => `${resolve(archive).replace(/[\\/]+$/, '')}.reduced`;

export async function runReduce({ archive, out = null, spec: specPath = null, jobs, progress }: ReduceOptions): Promise<{ record: RunRecord; quality: QualityReport }> {
  const started = new Date();
  const clock = (t0: number) => (performance.now() - t0) / 1000;
  const root = resolve(archive);
  const outDir = resolve(out ?? defaultOut(archive));
  const runId = randomUUID();

  let t = performance.now();
  const declaration = await loadArchiveDeclaration(root);
  const spec = await loadSpec(root, specPath);
  const scanned = await scan(root, declaration, { exclude: [outDir] });
  const scanS = clock(t);

  t = performance.now();
  const work = plan(scanned.recordings, declaration.groups, spec.spec);
  progress?.start(work.length);
  const results = await reduceAll(work, { jobs, onResult: (r) => progress?.done(r) });
  progress?.stop();
  const reduceS = clock(t);

  t = performance.now();
  await mkdir(outDir, { recursive: true });
  const labels = [...new Set(declaration.groups.flatMap((g) => Object.keys(g.labels)))];
  const columns: TableColumn[] = [
    ...IDENTITY_COLUMNS,
    ...labels.map((name): TableColumn => ({ name, type: 'string', nullable: true, unit: '', description: 'Label declared for the recording\'s group.' })),
    ...QUALITY_COLUMNS,
    ...featureColumns(spec.spec).map((c): TableColumn => ({ ...c, type: 'float64', nullable: true })),
  ];
  const rows = byRecording(results).flatMap((r) => r.rows);
  const metadata = { 'quern.version': toolVersion, 'quern.run_id': runId, 'quern.spec_hash': spec.hash, 'quern.spec': JSON.stringify(spec.spec), 'quern.archive': root };
  await writeParquetTable(join(outDir, 'features.parquet'), columns, rows, metadata);
  await writeParquetTable(join(outDir, 'windows.parquet'), WINDOW_TABLE, byRecording(results).flatMap((r) => r.tables.windows ?? []), metadata);

  const quality = qualityReport({ version: toolVersion, runId, archive: root, results: byRecording(results), unmatched: scanned.unmatched });
  await writeFileAtomic(join(outDir, 'quality.json'), JSON.stringify(quality, null, 2) + '\n');
  await writeFileAtomic(join(outDir, 'quality.html'), await qualityHtml(quality, results));
  const writeS = clock(t);

  const record = runRecord({
    runId, started, archive: root, out: outDir, spec, scanned: scanned.recordings.length, unmatched: scanned.unmatched,
    results: byRecording(results), timings: { scan_s: scanS, reduce_s: reduceS, write_s: writeS },
  });
  await writeFileAtomic(join(outDir, 'run.json'), JSON.stringify(record, null, 2) + '\n');
  return { record, quality };
}

const byRecording = (results: RecordingResult[]) => [...results].sort((a, b) => (a.recording < b.recording ? -1 : a.recording > b.recording ? 1 : 0));
