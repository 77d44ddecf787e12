// quality.json: per run, per recording, per channel, every flag with value, threshold, severity, evidence and message.
// Made recording by recording as the tables are written: each recording's part, and totals summed as they arrive.
import { FLAG_NAMES } from '../../stages/index.js';
import { SEVERITIES, worst, type Flag, type Severity } from '../../stages/quality/flag.js';
import type { RecordingResult } from '../reduce/result.js';
import type { ChangesReport } from '../trends/changes.js';
import { addNotAssessed, notAssessedLines, type NotAssessed } from './not-assessed.js';
import { byNews, failGroupLine, type FailGroup } from './quality-news.js';

/** A flag as quality.json holds it: at warn or fail, `new` where the output folder's previous run did not report it at that severity (quality-news.ts). */
export type QualityFlag = Flag & { new?: boolean };
export interface QualityChannel { channel: string; unit: string; severity: Severity; flags: QualityFlag[] }
export interface QualityRecording { recording: string; group: string; status: 'reduced' | 'failed'; severity: Severity; reason?: string; channels: QualityChannel[] }
type Counts = Record<Severity, number>;
/** `not_assessed` by flag name: checks that could not be made (read as ok by severity), absent from totals made before it was kept. */
export interface QualityTotals { channels: Counts; recordings: Counts & { unreadable: number; unmatched: number }; flags: Record<string, Counts>; not_assessed?: Record<string, NotAssessed> }
export interface QualityReport {
  tool: 'quern';
  version: string;
  run_id: string;
  generated: string;
  archive: string;
  totals: QualityTotals;
  recordings: QualityRecording[];
  unmatched: string[];
  /** What changed against each channel's baseline (spec section trends), when trends are on. */
  changes?: ChangesReport;
}

/**
 * What the terminal shows of a run's quality: the totals, and the failed flags per channel and flag (`fails`, ordered by
 * quality-news.ts's `byNews`; all of them are in quality.json), with the count of failed flags over the recordings.
 */
export interface QualitySummary { totals: QualityTotals; fails: FailGroup[]; failCount: number; changes?: ChangesReport | null }

/** Failed channel flags listed on the terminal; the rest are counted. */
export const MAX_FAIL_LINES = 50;

export function qualityRecording(r: RecordingResult): QualityRecording {
  return r.status === 'failed'
    ? { recording: r.recording, group: r.group, status: 'failed', severity: 'fail', reason: r.reason, channels: [] }
    : { recording: r.recording, group: r.group, status: 'reduced', severity: worst(r.quality.map((q) => q.severity)), channels: r.quality.map(({ channel, unit, severity, flags }) => ({ channel, unit, severity, flags })) };
}

const zero = (): Counts => Object.fromEntries(SEVERITIES.map((s) => [s, 0])) as Counts;

export const emptyTotals = (unmatched = 0): QualityTotals => ({
  channels: zero(), recordings: { ...zero(), unreadable: 0, unmatched }, flags: Object.fromEntries(FLAG_NAMES.map((n) => [n, zero()])), not_assessed: {},
});

/** Counts one recording into the totals. */
export function countRecording(t: QualityTotals, r: QualityRecording): void {
  t.recordings[r.severity]++;
  if (r.status === 'failed') t.recordings.unreadable++;
  for (const c of r.channels) {
    t.channels[c.severity]++;
    for (const f of c.flags) {
      if (t.flags[f.name]) t.flags[f.name][f.severity]++;
      if (f.not_assessed) addNotAssessed(t.not_assessed ??= {}, f.name, { channels: 1, groups: [r.group], why: [f.not_assessed] });
    }
  }
}

/** Adds totals made elsewhere (another slice of the run) into `t`. */
export function addTotals(t: QualityTotals, more: QualityTotals): void {
  for (const s of SEVERITIES) {
    t.channels[s] += more.channels[s];
    t.recordings[s] += more.recordings[s];
    for (const name of Object.keys(t.flags)) t.flags[name][s] += more.flags[name]?.[s] ?? 0;
  }
  t.recordings.unreadable += more.recordings.unreadable;
  for (const [name, n] of Object.entries(more.not_assessed ?? {})) addNotAssessed(t.not_assessed ??= {}, name, n);
}

/** A recording's failed flags, one group each, to be gathered per channel and flag with the other recordings'. */
export const failGroupsOf = (r: QualityRecording, startMs: number | null): FailGroup[] =>
  r.channels.filter((x) => x.severity === 'fail').flatMap((c) => c.flags.filter((x) => x.severity === 'fail').map((f) => ({
    group: r.group, channel: c.channel, flag: f.name, new: f.new === true, failed: 1, of: 0, latest: { recording: r.recording, start_ms: startMs, message: f.message },
  })));

/**
 * The terminal's quality lines: counts by severity, then the failed flags with their messages, new ones first, then the
 * newest recording first; a flag failing on several recordings of a channel in one line.
 */
export function qualitySummary(q: QualitySummary, max = MAX_FAIL_LINES): string[] {
  const t = q.totals.channels;
  const fails = [...(q.fails ?? [])].sort(byNews), shown = fails.slice(0, max);
  // A digest file kept before the flags were gathered holds the lines themselves.
  const legacy = q.fails ? [] : ((q as { failLines?: string[] }).failLines ?? []);
  const lines = [`  quality: ${t.fail} ${t.fail === 1 ? 'channel fails' : 'channels fail'}, ${t.warn} warn, ${t.note} with notes, ${t.ok} ok`, ...notAssessedLines(q.totals.not_assessed).map((l) => `  NOT CHECKED ${l}`), ...shown.map(failGroupLine), ...legacy];
  const untold = q.failCount - shown.reduce((n, g) => n + g.failed, 0) - legacy.length, fresh = fails.slice(max).filter((g) => g.new).length;
  if (untold > 0) lines.push(`  …       and ${untold} more failed flags${fresh ? ` (on ${fresh} channel ${fresh === 1 ? 'flag' : 'flags'} new in this run)` : ''}: see quality.json`);
  return lines;
}
