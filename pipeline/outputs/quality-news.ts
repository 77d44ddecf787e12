// What is new in a run's data-quality flags: a channel's flag at warn or fail that the output folder's previous run did not
// report at that severity or above. The flags a run reports are kept in cache/reported-quality.json (names only, no paths),
// as trends/news.ts keeps the changes; and the failed flags the terminal lists, gathered per channel and flag, ordered for
// a morning read: new first, then by severity, then the newest recording first.
import { mkdir, readFile } from 'node:fs/promises';
import { dirname, join } from 'node:path';
import { SEVERITIES, type Severity } from '../../stages/quality/flag.js';
import { writeFileAtomic } from './atomic.js';

/** One channel's flag as a run reported it: at warn or fail. */
export interface ReportedFlag { group: string; channel: string; flag: string; severity: 'warn' | 'fail' }
export interface ReportedFlags { reported: ReportedFlag[] }

export const reportedFlagsPath = (out: string) => join(out, 'cache', 'reported-quality.json');

/** A channel's flag: its group, channel and flag name. */
export const flagKey = (group: string, channel: string, flag: string) => `${group}\u0000${channel}\u0000${flag}`;

/** The severity each flag was reported at, by flagKey, as plain data for the workers; null where no earlier report is kept. */
export type EarlierFlags = Record<string, number> | null;

const rank = (s: Severity) => SEVERITIES.indexOf(s);

/** The earlier report, or null where none is kept (a first run, cache/ deleted) or it cannot be read: then every flag is new. */
export async function readReportedFlags(out: string): Promise<EarlierFlags> {
  try {
    const r = JSON.parse(await readFile(reportedFlagsPath(out), 'utf8')) as ReportedFlags;
    if (!Array.isArray(r?.reported)) return null;
    const earlier: Record<string, number> = {};
    for (const x of r.reported) { const k = flagKey(x.group, x.channel, x.flag); earlier[k] = Math.max(earlier[k] ?? 0, rank(x.severity)); }
    return earlier;
  } catch {
    return null;
  }
}

/** Whether a flag at `severity` is new: the earlier report did not hold it at that severity or above (every one is new without a report). */
export const isNewFlag = (earlier: EarlierFlags, key: string, severity: Severity): boolean => earlier == null || (earlier[key] ?? -1) < rank(severity);

export async function keepReportedFlags(out: string, r: ReportedFlags): Promise<void> {
  await mkdir(dirname(reportedFlagsPath(out)), { recursive: true });
  await writeFileAtomic(reportedFlagsPath(out), JSON.stringify(r) + '\n');
}

/**
 * A channel's failed flag over the run's recordings: in how many of the channel's recordings it failed, and the newest of
 * them (by start time, then name) with its message.
 */
export interface FailGroup {
  group: string; channel: string; flag: string; new: boolean;
  /** Recordings in which it failed, and the channel's recordings in the run. */
  failed: number; of: number;
  latest: { recording: string; start_ms: number | null; message: string };
}

/** Newest first: by start time (a recording without one after those with one), then by name, the later first. */
const newer = (a: FailGroup['latest'], b: FailGroup['latest']) =>
  (b.start_ms ?? -Infinity) - (a.start_ms ?? -Infinity) || (a.recording < b.recording ? 1 : a.recording > b.recording ? -1 : 0);

/** The failed flags of several slices, gathered per channel and flag (`into` keeps the result). */
export function addFailGroups(into: Map<string, FailGroup>, more: Iterable<FailGroup>): void {
  for (const g of more) {
    const k = flagKey(g.group, g.channel, g.flag), had = into.get(k);
    if (!had) { into.set(k, { ...g, latest: { ...g.latest } }); continue; }
    had.failed += g.failed;
    had.new ||= g.new;
    if (newer(g.latest, had.latest) < 0) had.latest = { ...g.latest };
  }
}

/** The order a morning reader needs: new first, then the newest recording first. */
export const byNews = (a: FailGroup, b: FailGroup): number => Number(b.new) - Number(a.new) || newer(a.latest, b.latest);

/** A terminal line: one recording's failed flag as it is, a flag failing on several recordings of a channel summarised. */
export function failGroupLine(g: FailGroup): string {
  const mark = g.new ? '; NEW' : '';
  if (g.failed === 1) return `  FAIL    ${g.latest.recording} ${g.channel}: ${g.flag}: ${g.latest.message}${mark}`;
  return `  FAIL    ${g.group} ${g.channel}: ${g.flag} in ${g.failed} of ${g.of} recordings, the latest ${g.latest.recording}: ${g.latest.message}${mark}`;
}
