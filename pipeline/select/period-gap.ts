// A gap before a --since period: recordings starting before this period in a stretch no finished run of the output folder
// (a whole run, or a merge of shards) put in its tables, after the first such run's period began. A night whose run failed,
// whose shard failed (so that merge refused), or that never ran leaves its recordings there: no tables held them, and this
// period's do not either, so every --since run names them and says how to take them, until a run's period takes them in.
import { coverEndBefore, uncovered, type Cover } from './covered-stretches.js';
import type { ScannedRecording } from './scan.js';

/** One recording in the gap, as run.json lists it. */
export interface GapRecording { recording: string; group: string; start_time: string }

/** The gap run.json keeps (`period.gap`): where the finished runs' cover ended before it, how many recordings lie in it, and each. */
export interface PeriodGap {
  /** The end of what the finished runs' tables covered before the gap's earliest recording. */
  covered_until: string;
  count: number;
  earliest_start: string;
  latest_start: string;
  recordings: GapRecording[];
}

/** The end of the starts a finished run's tables held: its scan's start (nothing could start later and be found), or --until before it. */
export const coverEnd = (scanStartedMs: number, until: number | null): number => (until == null ? scanStartedMs : Math.min(until, scanStartedMs));

/**
 * The recordings (of `recordings`, with their starts aligned in `starts`) starting before `since` where `cover` has a gap:
 * in no finished run's tables, nor in this period's. No cover kept (a new output folder, cache/ deleted): no gap.
 */
export function gapBefore(recordings: readonly ScannedRecording[], starts: readonly number[], since: number, cover: Cover | null): { file: ScannedRecording; start: number }[] {
  if (cover == null) return [];
  const gap: { file: ScannedRecording; start: number }[] = [];
  recordings.forEach((r, i) => { if (starts[i] < since && uncovered(cover, starts[i])) gap.push({ file: r, start: starts[i] }); });
  return gap;
}

const iso = (ms: number) => new Date(ms).toISOString();
const byStart = (a: GapRecording, b: GapRecording) => (a.start_time < b.start_time ? -1 : a.start_time > b.start_time ? 1 : a.recording < b.recording ? -1 : 1);

/** run.json's record of the gap, or undefined when it holds no recording. */
export function gapRecord(gap: readonly { file: ScannedRecording; start: number }[], cover: Cover | null, groupNames: readonly string[]): PeriodGap | undefined {
  if (!gap.length || cover == null) return undefined;
  const recordings = gap.map((g) => ({ recording: g.file.recording, group: groupNames[g.file.group], start_time: iso(g.start) })).sort(byStart);
  const earliest = Math.min(...gap.map((g) => g.start));
  return withCounts(recordings, iso(coverEndBefore(cover.stretches, earliest) ?? cover.floor));
}

function withCounts(recordings: GapRecording[], covered_until: string): PeriodGap {
  return { covered_until, count: recordings.length, earliest_start: recordings[0].start_time, latest_start: recordings.at(-1)!.start_time, recordings };
}

/** Every shard's gap as one, for quern merge (undefined when none has one). */
export function combinedGap(parts: readonly (PeriodGap | undefined)[]): PeriodGap | undefined {
  const found = parts.filter((p): p is PeriodGap => p != null);
  if (!found.length) return undefined;
  return withCounts(found.flatMap((p) => p.recordings).sort(byStart), found.map((p) => p.covered_until).sort()[0]);
}

/** The terminal's line on the gap: which recordings no period's tables hold, why that happens, and how to take them. */
export function gapLines(g: PeriodGap | undefined): string[] {
  if (!g) return [];
  const which = g.count === 1 ? `1 recording (${g.recordings[0].recording}, started ${g.earliest_start})` : `${g.count} recordings (started ${g.earliest_start} to ${g.latest_start}; ${g.recordings.slice(0, 3).map((r) => r.recording).join(', ')}${g.count > 3 ? ', …' : ''})`;
  return [`  GAP     ${which} ${g.count === 1 ? 'starts' : 'start'} after the period the finished runs before this one covered (to ${g.covered_until}) and before this period: no period's tables hold ${g.count === 1 ? 'it' : 'them'} (a run or shard that failed, was stopped or did not run); run once without --since, or with --since ${g.earliest_start} or earlier, to put ${g.count === 1 ? 'it' : 'them'} in the tables; see run.json (period.gap)`];
}
