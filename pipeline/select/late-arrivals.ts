// Late arrivals: recordings that start before a --since period and came into the archive after the earlier runs of the
// output folder looked, such as an older night copied in after the nightly runs that covered its dates. No period would
// ever select them, so a run without --until reduces them for the trends' history (never into the period's tables), and
// every run with a period names them. Recordings an earlier run saw and left out are not: a first --since run into a new
// output folder reduces its period alone, as asked, and so do the nights after it.
import type { ScanMarks } from '../store/store.js';
import type { ScannedRecording } from './scan.js';

/** One late arrival as run.json lists it: its start, and what its reduction gave where it was reduced. */
export interface LateArrival { recording: string; group: string; start_time: string; status?: 'reduced' | 'failed'; reason?: string }

/** The late arrivals a --since run found: how many, the earliest and latest start, whether it reduced them, and each one. */
export interface LateArrivals {
  count: number;
  earliest_start: string | null;
  latest_start: string | null;
  /** Reduced in this run (false where --until bounds the run: they are only named). */
  reduced: boolean;
  /** Of those reduced, how many failed (each with its reason below). */
  failed: number;
  recordings: LateArrival[];
  /** Late arrivals earlier runs found that no finished run's tables hold yet (absent: none). */
  earlier?: EarlierLate;
}

/**
 * Late arrivals earlier runs found and no finished run's tables hold yet, named on every --since run until one takes them in:
 * how many, their starts, each one listed (with what its stored reduction gave), and how many the marks count without listing.
 */
export interface EarlierLate {
  count: number;
  earliest_start: string | null;
  latest_start: string | null;
  recordings: LateArrival[];
  unlisted: number;
}

/**
 * The recordings starting before `since` that came in after the earlier runs looked, each with its start (`starts` is
 * aligned with `recordings`): one with no stored result that no earlier run saw and left out (a new path: copied, moved in
 * with its folder, renamed), or that changed as a file since it was seen; one with a stored result whose file changed as a
 * file since the latest run (a copy over it), to be decided again. The inode change time tells: a copy that keeps the
 * modification time (cp -p, rsync -t) still sets it. No earlier run said what it saw (a new output folder): none.
 */
export function arrivalsBefore(recordings: readonly ScannedRecording[], starts: readonly number[], since: number, marks: ScanMarks, stored: (recording: string) => boolean): { file: ScannedRecording; start: number }[] {
  const { latestMs, leftOut } = marks;
  if (latestMs == null) return [];
  const late: { file: ScannedRecording; start: number }[] = [];
  recordings.forEach((r, i) => {
    if (!(starts[i] < since)) return;
    const changed = (seenAt: number) => (r.ctimeMs ?? 0) >= seenAt;
    const seenAt = leftOut.get(r.recording);
    if (stored(r.recording) ? changed(latestMs) : seenAt === undefined || changed(seenAt)) late.push({ file: r, start: starts[i] });
  });
  return late;
}

type Outcome = (recording: string) => { status: 'reduced' | 'failed'; reason?: string } | undefined;

/** Late arrivals as run.json lists them, by start; with `outcome`, what each one's stored reduction gave. */
function listed(late: readonly { file: ScannedRecording; start: number }[], groupNames: readonly string[], outcome: Outcome | null): LateArrival[] {
  return [...late].sort((a, b) => a.start - b.start || (a.file.recording < b.file.recording ? -1 : 1)).map(({ file, start }): LateArrival => {
    const o = outcome?.(file.recording);
    return { recording: file.recording, group: groupNames[file.group], start_time: new Date(start).toISOString(), ...(o ? { status: o.status, ...(o.reason ? { reason: o.reason } : {}) } : {}) };
  });
}

/**
 * The record of the late arrivals found; `outcome` gives a reduced one's status and reason (undefined: not reduced in this
 * run); `earlier` and `unlisted`, those earlier runs found that no finished run's tables hold yet.
 */
export function lateArrivalsRecord(late: readonly { file: ScannedRecording; start: number }[], groupNames: readonly string[], reduced: boolean, outcome: Outcome, earlier: readonly { file: ScannedRecording; start: number }[] = [], unlisted = 0): LateArrivals {
  const before = listed(earlier, groupNames, outcome);
  return { ...withCounts(listed(late, groupNames, reduced ? outcome : null), reduced), ...(before.length || unlisted ? { earlier: earlierCounts(before, unlisted) } : {}) };
}

function earlierCounts(recordings: LateArrival[], unlisted: number): EarlierLate {
  return { count: recordings.length, earliest_start: recordings[0]?.start_time ?? null, latest_start: recordings.at(-1)?.start_time ?? null, recordings, unlisted };
}

function withCounts(recordings: LateArrival[], reduced: boolean): LateArrivals {
  return {
    count: recordings.length, earliest_start: recordings[0]?.start_time ?? null, latest_start: recordings.at(-1)?.start_time ?? null,
    reduced, failed: recordings.filter((r) => r.status === 'failed').length, recordings,
  };
}

/** The late arrivals of every shard as one (parts written before they were kept have none). */
export function combinedLateArrivals(parts: readonly (LateArrivals | undefined)[]): LateArrivals | undefined {
  const found = parts.filter((p): p is LateArrivals => p != null);
  if (!found.length) return undefined;
  const byStart = (a: LateArrival, b: LateArrival) => (a.start_time < b.start_time ? -1 : a.start_time > b.start_time ? 1 : a.recording < b.recording ? -1 : 1);
  const recordings = found.flatMap((p) => p.recordings).sort(byStart);
  // Each shard names those of its share; the count without a list is the marks' one, which every shard read.
  const earlier = found.flatMap((p) => p.earlier?.recordings ?? []).sort(byStart), unlisted = Math.max(0, ...found.map((p) => p.earlier?.unlisted ?? 0));
  return { ...withCounts(recordings, found.every((p) => p.reduced)), ...(earlier.length || unlisted ? { earlier: earlierCounts(earlier, unlisted) } : {}) };
}

/** The way to put late arrivals starting from `earliest` into the tables. */
const takeIn = (earliest: string | null, one: boolean) => `run once without --since, or with --since ${earliest} or earlier, to put ${one ? 'it' : 'them'} in the tables`;

/** The terminal's lines on late arrivals: this run's, then those earlier runs found that no finished run's tables hold yet. */
export function lateArrivalLines(l: LateArrivals): string[] {
  return [...foundLines(l), ...earlierLines(l.earlier)];
}

/** This run's late arrivals: how many and when they start, what became of them, and each one that failed. */
function foundLines(l: LateArrivals): string[] {
  if (!l.count) return [];
  const which = `${l.count} late ${l.count === 1 ? 'arrival' : 'arrivals'} (${l.count === 1 ? 'a recording' : 'recordings'} starting before this period that came in after the previous run, ${l.earliest_start === l.latest_start ? `started ${l.earliest_start}` : `started ${l.earliest_start} to ${l.latest_start}`})`;
  const what = l.reduced
    ? `reduced for the trends' history, and kept out of this period's tables${l.failed ? `; ${l.failed} failed` : ''}; named on every --since run until a run's tables hold ${l.count === 1 ? 'it' : 'them'}: ${takeIn(l.earliest_start, l.count === 1)}`
    : 'not reduced, as --until bounds this run, so the trends\' history lacks them; run once with --since alone (or without --since) to reduce them';
  return [
    `  LATE    ${which}: ${what}; see run.json (period.late_arrivals)`,
    ...l.recordings.filter((r) => r.status === 'failed').map((r) => `  FAILED  ${r.recording} (a late arrival): ${r.reason}`),
  ];
}

/** Late arrivals earlier runs found that no finished run's tables hold yet: how many, when they start, how to take them in. */
function earlierLines(e: EarlierLate | undefined): string[] {
  if (!e || !(e.count + e.unlisted)) return [];
  const n = e.count + e.unlisted, one = n === 1;
  const named = e.recordings.slice(0, 3).map((r) => r.recording).join(', ') + (e.count > 3 ? ', …' : '');
  const starts = e.count ? (e.earliest_start === e.latest_start ? `started ${e.earliest_start}` : `started ${e.earliest_start} to ${e.latest_start}`) + `; ${named}` : '';
  const more = e.unlisted ? `${e.count ? '; ' : ''}${e.unlisted} more the marks count without listing` : '';
  const how = !e.unlisted ? takeIn(e.earliest_start, one) : 'run once without --since to put them in the tables';
  return [`  LATE    ${n} late ${one ? 'arrival' : 'arrivals'} found by earlier runs (${starts}${more}) ${one ? 'is' : 'are'} in no period's tables yet; ${how}; see run.json (period.late_arrivals.earlier)`];
}
