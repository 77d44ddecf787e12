// Writes a run's tables and reports from assembled recordings; shared by reduce (whole or one shard) and merge.
import { mkdir } from 'node:fs/promises';
import { dirname, join } from 'node:path';
import { featureColumns } from '../../stages/index.js';
import { writeFileAtomic } from './atomic.js';
import type { ReductionSpec } from '../../spec/reduction.js';
import { qualityReport, type QualityReport } from './quality.js';
import type { RecordingResult } from '../reduce/result.js';
import { drawPictures, qualityHtml } from './report-html.js';
import { IDENTITY_COLUMNS, QUALITY_COLUMNS, writeParquetTable, type TableColumn } from './parquet.js';
import { SECONDARY_TABLES } from './tables.js';

/** Where a run writes: `table(name)` gives the file of features.parquet or of a secondary table. */
export interface OutputNames { table: (name: string) => string; qualityJson: string; qualityHtml: string | null }

export const FINAL_NAMES: OutputNames = { table: (name) => `${name}.parquet`, qualityJson: 'quality.json', qualityHtml: 'quality.html' };
export const partNames = (k: number, n: number): OutputNames => ({
  table: (name) => `parts/${name}-${k}-of-${n}.parquet`, qualityJson: `parts/quality-${k}-of-${n}.json`, qualityHtml: null,
});

export const byRecording = <T extends { recording: string }>(xs: T[]) => [...xs].sort((a, b) => (a.recording < b.recording ? -1 : a.recording > b.recording ? 1 : 0));

export function tableColumns(spec: ReductionSpec, labels: string[]): TableColumn[] {
  return [
    ...IDENTITY_COLUMNS,
    ...labels.map((name): TableColumn => ({ name, type: 'string', nullable: true, unit: '', description: 'Label declared for the recording\'s group.' })),
    ...QUALITY_COLUMNS,
    ...featureColumns(spec).map((c): TableColumn => ({ ...c, type: 'float64', nullable: true })),
  ];
}

export async function writeOutputs(outDir: string, names: OutputNames, o: {
  results: RecordingResult[]; spec: ReductionSpec; labels: string[]; metadata: Record<string, string>; version: string; runId: string; archive: string; unmatched: string[];
}): Promise<QualityReport> {
  const results = byRecording(o.results);
  await mkdir(dirname(join(outDir, names.table('features'))), { recursive: true });
  await writeParquetTable(join(outDir, names.table('features')), tableColumns(o.spec, o.labels), results.flatMap((r) => r.rows), o.metadata);
  for (const [name, columns] of Object.entries(SECONDARY_TABLES)) {
    await writeParquetTable(join(outDir, names.table(name)), columns, results.flatMap((r) => r.tables[name] ?? []), o.metadata);
  }
  const quality = qualityReport({ version: o.version, runId: o.runId, archive: o.archive, results, unmatched: o.unmatched });
  await writeFileAtomic(join(outDir, names.qualityJson), JSON.stringify(quality, null, 2) + '\n');
  if (names.qualityHtml) {
    await drawPictures(quality, results);
    await writeFileAtomic(join(outDir, names.qualityHtml), qualityHtml(quality, results));
  }
  return quality;
}
