// What a run did, for run.json and for the terminal.
import type { LoadedSpec } from '../declare/declare.js';
import { toolVersion } from '../declare/package-files.js';
import type { RecordingResult } from '../reduce/result.js';
import type { Decision } from '../plan/reuse.js';
import type { Shard } from '../select/select.js';
import { qualitySummary, type QualityReport } from './quality.js';
import { changesSummary } from '../trends/summary.js';

export interface RunRecord {
  tool: 'quern';
  version: string;
  run_id: string;
  started: string;
  finished: string;
  archive: string;
  out: string;
  spec: { source: string; hash: string; value: unknown };
  counts: { scanned: number; selected: number; reduced: number; failed: number; unmatched: number; rows: number; recomputed: number; reused: number };
  recordings: {
    recording: string; group: string; status: string; reason?: string; messages: string[]; rows: number; frames: number; sample_rate: number | null; seconds: number;
    /** Feature groups computed in this run and reused from earlier runs, and why. */
    recomputed: string[]; reused: string[]; why: string;
  }[];
  /** This run's shard (part files under parts/), or null for a whole run. */
  shard: Shard | null;
  /** The period asked for with --since/--until (ms since the epoch) and how many recordings fell in it. */
  period: { since: number | null; until: number | null; selected: number } | null;
  /** Label columns and each group's labels, so that `quern merge` can assemble parts as one run would. */
  label_columns: string[];
  labels_by_group: Record<string, Record<string, string>>;
  unmatched: { path: string; reason: string }[];
  timings: { scan_s: number; reduce_s: number; write_s: number; total_s: number };
}

export interface RunFacts {
  runId: string; started: Date; archive: string; out: string; spec: LoadedSpec; scanned: number; unmatched: string[];
  results: RecordingResult[]; timings: { scan_s: number; reduce_s: number; write_s: number };
  decisions: Pick<Decision, 'compute' | 'reused' | 'why'>[]; shard: Shard | null; labels: string[]; labelsByGroup: Record<string, Record<string, string>>;
  period: RunRecord['period'];
}

export function runRecord(f: RunFacts): RunRecord {
  const finished = new Date();
  return {
    tool: 'quern', version: toolVersion, run_id: f.runId, started: f.started.toISOString(), finished: finished.toISOString(),
    archive: f.archive, out: f.out, spec: { source: f.spec.source, hash: f.spec.hash, value: f.spec.spec },
    counts: {
      scanned: f.scanned, selected: f.results.length,
      recomputed: f.decisions.filter((d) => d.compute.length > 0).length, reused: f.decisions.filter((d) => d.compute.length === 0).length,
      reduced: f.results.filter((r) => r.status === 'reduced').length, failed: f.results.filter((r) => r.status === 'failed').length,
      unmatched: f.unmatched.length, rows: f.results.reduce((s, r) => s + r.rows.length, 0),
    },
    recordings: f.results.map((r, i) => ({
      recording: r.recording, group: r.group, status: r.status, ...(r.reason ? { reason: r.reason } : {}), messages: r.messages,
      rows: r.rows.length, frames: r.frames, sample_rate: r.sampleRate, seconds: round(r.seconds),
      recomputed: f.decisions[i].compute, reused: f.decisions[i].reused, why: f.decisions[i].why,
    })),
    shard: f.shard, period: f.period, label_columns: f.labels, labels_by_group: f.labelsByGroup,
    unmatched: f.unmatched.map((path) => ({ path, reason: 'no group in archive.yaml matches this file; add a group for it, or move it out of the archive' })),
    timings: { ...mapValues(f.timings, round), total_s: round((finished.getTime() - f.started.getTime()) / 1000) },
  };
}

const round = (s: number) => Math.round(s * 1000) / 1000;
const mapValues = <T extends Record<string, number>>(o: T, fn: (v: number) => number) => Object.fromEntries(Object.entries(o).map(([k, v]) => [k, fn(v)])) as T;

/** The end-of-run summary a person reads on the terminal. */
export function summaryText(r: RunRecord, q: QualityReport): string {
  const lines = [
    `quern ${r.version}: ${r.counts.reduced} of ${r.counts.selected} recordings reduced (${r.counts.rows} channel rows) in ${r.timings.total_s.toFixed(1)} s; ${r.counts.failed} failed, ${r.counts.unmatched} unmatched; ${r.counts.recomputed} computed, ${r.counts.reused} reused whole${r.shard ? `; shard ${r.shard.k} of ${r.shard.n}` : ''}${r.counts.selected < r.counts.scanned && !r.shard ? `; ${r.counts.scanned} in the archive` : ''}.`,
  ];
  // What changed leads: it is the machine's story; the data-quality lines follow.
  if (q.changes) lines.push(...changesSummary(q.changes));
  for (const f of r.recordings.filter((x) => x.status === 'failed')) lines.push(`  FAILED  ${f.recording}: ${f.reason}`);
  const noted = r.recordings.filter((x) => x.messages.length);
  if (noted.length) lines.push(`  notes   ${noted.reduce((s, x) => s + x.messages.length, 0)} notes on ${noted.length} recordings (bands above Nyquist, irregular time steps, …): see run.json`);
  for (const u of r.unmatched) lines.push(`  UNMATCHED  ${u.path}: ${u.reason}`);
  lines.push(...qualitySummary(q));
  if (r.shard) lines.push(`  parts:   ${r.out}/parts/ (shard ${r.shard.k} of ${r.shard.n}); combine them with: quern merge ${r.out}`);
  else lines.push(`  table:   ${r.out}/features.parquet (and windows.parquet${q.changes ? ', trends.parquet' : ''}${(r.spec.value as { spectrum?: unknown }).spectrum ? ', spectra.parquet' : ''})`, `  quality: ${r.out}/quality.html (and quality.json)`, `  run:     ${r.out}/run.json`);
  return lines.join('\n');
}
