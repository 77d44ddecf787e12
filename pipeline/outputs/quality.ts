// quality.json: per run, per recording, per channel, every flag with value, threshold, severity, evidence and message.
import { FLAG_NAMES } from '../../stages/index.js';
import { SEVERITIES, worst, type Flag, type Severity } from '../../stages/quality/flag.js';
import type { RecordingResult } from '../reduce/result.js';
import type { ChangesReport } from '../trends/changes.js';

export interface QualityChannel { channel: string; unit: string; severity: Severity; flags: Flag[] }
export interface QualityRecording { recording: string; group: string; status: 'reduced' | 'failed'; severity: Severity; reason?: string; channels: QualityChannel[] }
export interface QualityReport {
  tool: 'quern';
  version: string;
  run_id: string;
  generated: string;
  archive: string;
  totals: { channels: Record<Severity, number>; recordings: Record<Severity, number> & { unreadable: number; unmatched: number }; flags: Record<string, Record<Severity, number>> };
  recordings: QualityRecording[];
  unmatched: string[];
  /** What changed against each channel's baseline (spec section trends), when trends are on. */
  changes?: ChangesReport;
}

export function qualityReport(o: { version: string; runId: string; archive: string; results: RecordingResult[]; unmatched: string[]; changes?: ChangesReport | null }): QualityReport {
  const recordings: QualityRecording[] = o.results.map((r) => r.status === 'failed'
    ? { recording: r.recording, group: r.group, status: 'failed', severity: 'fail', reason: r.reason, channels: [] }
    : { recording: r.recording, group: r.group, status: 'reduced', severity: worst(r.quality.map((q) => q.severity)), channels: r.quality.map(({ channel, unit, severity, flags }) => ({ channel, unit, severity, flags })) });
  const count = (xs: Severity[]) => Object.fromEntries(SEVERITIES.map((v) => [v, xs.filter((s) => s === v).length])) as Record<Severity, number>;
  const channels = recordings.flatMap((r) => r.channels);
  return {
    tool: 'quern', version: o.version, run_id: o.runId, generated: new Date().toISOString(), archive: o.archive,
    totals: {
      channels: count(channels.map((c) => c.severity)),
      recordings: { ...count(recordings.map((r) => r.severity)), unreadable: recordings.filter((r) => r.status === 'failed').length, unmatched: o.unmatched.length },
      flags: Object.fromEntries(FLAG_NAMES.map((name) => [name, count(channels.flatMap((c) => c.flags.filter((f) => f.name === name).map((f) => f.severity)))])),
    },
    recordings,
    unmatched: o.unmatched,
    ...(o.changes ? { changes: o.changes } : {}),
  };
}

/** The terminal's quality lines: counts by severity, then every failed channel with its message. */
export function qualitySummary(q: QualityReport): string[] {
  const t = q.totals.channels;
  const lines = [`  quality: ${t.fail} channels fail, ${t.warn} warn, ${t.note} with notes, ${t.ok} ok`];
  for (const r of q.recordings) {
    for (const c of r.channels.filter((x) => x.severity === 'fail')) {
      for (const f of c.flags.filter((x) => x.severity === 'fail')) lines.push(`  FAIL    ${r.recording} ${c.channel}: ${f.name}: ${f.message}`);
    }
  }
  return lines;
}
