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

/** The record of the late arrivals found; `outcome` gives a reduced one's status and reason (undefined: not reduced in this run). */
export function lateArrivalsRecord(late: readonly { file: ScannedRecording; start: number }[], groupNames: readonly string[], reduced: boolean, outcome: (recording: string) => { status: 'reduced' | 'failed'; reason?: string } | undefined): LateArrivals {
  const recordings = [...late].sort((a, b) => a.start - b.start || (a.file.recording < b.file.recording ? -1 : 1)).map(({ file, start }): LateArrival => {
    const o = reduced ? outcome(file.recording) : undefined;
    return { recording: file.recording, group: groupNames[file.group], start_time: new Date(start).toISOString(), ...(o ? { status: o.status, ...(o.reason ? { reason: o.reason } : {}) } : {}) };
  });
  return withCounts(recordings, reduced);
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
  const recordings = found.flatMap((p) => p.recordings).sort((a, b) => (a.start_time < b.start_time ? -1 : a.start_time > b.start_time ? 1 : a.recording < b.recording ? -1 : 1));
  return withCounts(recordings, found.every((p) => p.reduced));
}

/** The terminal's lines on late arrivals: how many and when they start, what became of them, and each one that failed. */
export function lateArrivalLines(l: LateArrivals): string[] {
  if (!l.count) return [];
  const which = `${l.count} late ${l.count === 1 ? 'arrival' : 'arrivals'} (${l.count === 1 ? 'a recording' : 'recordings'} starting before this period that came in after the previous run, ${l.earliest_start === l.latest_start ? `started ${l.earliest_start}` : `started ${l.earliest_start} to ${l.latest_start}`})`;
  const what = l.reduced
    ? `reduced for the trends' history, and kept out of this period's tables${l.failed ? `; ${l.failed} failed` : ''}`
    : 'not reduced, as --until bounds this run, so the trends\' history lacks them; run once with --since alone (or without --since) to reduce them';
  return [
    `  LATE    ${which}: ${what}; see run.json (period.late_arrivals)`,
    ...l.recordings.filter((r) => r.status === 'failed').map((r) => `  FAILED  ${r.recording} (a late arrival): ${r.reason}`),
  ];
}
