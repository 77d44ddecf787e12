// quern merge: combines the part files that shards wrote into one output folder, exactly as one process would have written it.
import { randomUUID } from 'node:crypto';
import { readdir, readFile } from 'node:fs/promises';
import { join, resolve } from 'node:path';
import { writeFileAtomic } from '../outputs/atomic.js';
import { readEntry } from '../plan/cache.js';
import { canonicalJson, type LoadedSpec } from '../declare/declare.js';
import type { ReductionSpec } from '../../spec/reduction.js';
import { FINAL_NAMES, writeOutputs } from '../outputs/outputs.js';
import { toolVersion } from '../declare/package-files.js';
import type { QualityReport } from '../outputs/quality.js';
import { assembleRecording } from '../reduce/assemble.js';
import { runRecord, type RunRecord } from '../outputs/report.js';
import { UsageError } from '../declare/yaml-file.js';
import { trendOptions } from '../trends/options.js';
import { entriesNamed, writeTrendsAndSpectra } from '../trends/trends.js';

export async function runMerge(out: string): Promise<{ record: RunRecord; quality: QualityReport }> {
  const started = new Date();
  const outDir = resolve(out);
  const partsDir = join(outDir, 'parts');
  const names = (await readdir(partsDir).catch(() => [] as string[])).filter((f) => /^run-\d+-of-\d+\.json$/.test(f));
  if (!names.length) throw new UsageError(`${partsDir}: no part files (run-K-of-N.json); run quern reduce with --shard K/N into ${outDir} first`);
  const parts: RunRecord[] = await Promise.all(names.map(async (f) => JSON.parse(await readFile(join(partsDir, f), 'utf8'))));
  const n = parts[0].shard!.n;
  const problems: string[] = [];
  if (parts.some((p) => p.shard?.n !== n)) problems.push(`the parts come from different shard counts (${[...new Set(parts.map((p) => p.shard?.n))].join(', ')}); delete the stale ones`);
  const missing = Array.from({ length: n }, (_, i) => i + 1).filter((k) => !parts.some((p) => p.shard?.k === k));
  if (missing.length) problems.push(missing.length > 1 ? `shards ${missing.join(', ')} of ${n} have not written their part yet; run them, then merge again` : `shard ${missing[0]} of ${n} has not written its part yet; run it, then merge again`);
  if (new Set(parts.map((p) => p.spec.hash)).size > 1) problems.push('the parts were reduced with different specs; run every shard with the same spec');
  if (new Set(parts.map((p) => p.archive)).size > 1) problems.push('the parts come from different archives');
  if (problems.length) throw new UsageError(`${partsDir}: cannot merge: ${problems.join('; ')}`);
  parts.sort((a, b) => a.shard!.k - b.shard!.k);

  const first = parts[0];
  const spec = first.spec.value as ReductionSpec;
  const listed = parts.flatMap((p) => p.recordings).sort((a, b) => (a.recording < b.recording ? -1 : 1));
  const results = await Promise.all(listed.map(async (r) => {
    const entry = await readEntry(outDir, r.recording);
    if (!entry) throw new UsageError(`${outDir}: the stored result of ${r.recording} is missing from cache/; run its shard again`);
    return assembleRecording(entry, first.labels_by_group[r.group] ?? {}, spec);
  }));
  const runId = randomUUID();
  const metadata = { 'quern.version': toolVersion, 'quern.run_id': runId, 'quern.spec_hash': first.spec.hash, 'quern.spec': JSON.stringify(spec), 'quern.archive': first.archive };
  const reduced = results.filter((r) => r.status === 'reduced').map((r) => r.recording);
  const changes = await writeTrendsAndSpectra(outDir, spec, { trends: trendOptions(spec), entries: entriesNamed(outDir, reduced), recordings: reduced, metadata });
  const quality = await writeOutputs(outDir, FINAL_NAMES, { results, spec, labels: first.label_columns, metadata, version: toolVersion, runId, archive: first.archive, unmatched: first.unmatched.map((u) => u.path), changes });
  const loaded: LoadedSpec = { spec, source: first.spec.source, text: canonicalJson(spec), hash: first.spec.hash };
  const record = runRecord({
    runId, started, archive: first.archive, out: outDir, spec: loaded, scanned: first.counts.scanned, unmatched: first.unmatched.map((u) => u.path), results,
    decisions: listed.map((r) => ({ compute: r.recomputed, reused: r.reused, why: r.why })),
    timings: { scan_s: Math.max(...parts.map((p) => p.timings.scan_s)), reduce_s: Math.max(...parts.map((p) => p.timings.reduce_s)), write_s: (Date.now() - started.getTime()) / 1000 },
    shard: null, labels: first.label_columns, labelsByGroup: first.labels_by_group, period: first.period,
  });
  await writeFileAtomic(join(outDir, 'run.json'), JSON.stringify(record, null, 2) + '\n');
  return { record, quality };
}
