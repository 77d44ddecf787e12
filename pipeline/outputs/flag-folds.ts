// quality.html's second look, folded: one entry per channel and flag at warn or fail over the run's recordings, as the
// terminal gathers a channel's failed flag into one line, so a sensor dead every night takes one entry and tonight's new
// finding is not lost among its repeats. What an entry holds is bounded: counts, and the newest recordings' rows.
import type { Place } from '../store/pack.js';
import { SEVERITIES, type Severity } from '../../stages/quality/flag.js';
import type { QualityFlag, QualityRecording } from './quality.js';
import { flagKey } from './quality-news.js';

/** The recordings an entry lists, the newest first; the earlier ones are counted (every one is in the overview and quality.json). */
export const FOLD_ROWS = 50;

/** One recording's verdict on the entry's flag: the row's cells made in the worker (`cells`), and where its channel's data lie for pictures. */
export interface FoldRow { recording: string; start_ms: number | null; severity: 'warn' | 'fail'; new: boolean; cells: string; at: Place }

/** A channel's flag at warn or fail over recordings: how many at each severity, and the newest rows (at most FOLD_ROWS). */
export interface FlagFold {
  group: string; channel: string; unit: string; flag: string;
  failed: number; warned: number;
  rows: FoldRow[];
}

/** Newest first: by start time (a recording without one after those with one), then by name, the later first. */
const newerRow = (a: FoldRow, b: FoldRow) =>
  (b.start_ms ?? -Infinity) - (a.start_ms ?? -Infinity) || (a.recording < b.recording ? 1 : a.recording > b.recording ? -1 : 0);

/** The entry's verdict: unusable if any recording's is. */
export const foldSeverity = (f: FlagFold): 'warn' | 'fail' => (f.failed > 0 ? 'fail' : 'warn');
/** New if any of its recordings' flag is new against the previous report. */
export const foldNew = (f: FlagFold): boolean => f.rows.some((r) => r.new);

/** A recording's flags at warn or fail, one fold each; `cells` renders a flag's row (report-html.ts's `foldCells`). */
export function foldsOf(q: QualityRecording, at: Place, startMs: number | null, cells: (recording: string, f: QualityFlag) => string): FlagFold[] {
  return q.channels.flatMap((c) => c.flags.filter((f) => f.severity === 'warn' || f.severity === 'fail').map((f): FlagFold => ({
    group: q.group, channel: c.channel, unit: c.unit, flag: f.name, failed: Number(f.severity === 'fail'), warned: Number(f.severity === 'warn'),
    rows: [{ recording: q.recording, start_ms: startMs, severity: f.severity as 'warn' | 'fail', new: f.new === true, cells: cells(q.recording, f), at }],
  })));
}

/**
 * Folds of several recordings or slices gathered per channel and flag (`into` keeps the result): counts summed, rows kept
 * newest first and cut to `keep`, so a fold's size does not grow with the run. A new row is kept whatever its age, so the
 * entry's mark stays once its row falls past the cut.
 */
export function addFolds(into: Map<string, FlagFold>, more: Iterable<FlagFold>, keep = FOLD_ROWS): void {
  for (const f of more) {
    const k = flagKey(f.group, f.channel, f.flag), had = into.get(k);
    if (!had) { into.set(k, { ...f, rows: [...f.rows] }); continue; }
    had.failed += f.failed;
    had.warned += f.warned;
    had.rows.push(...f.rows);
    // Sorted and cut only once twice the bound is held: a slice's rows are added a few at a time.
    if (had.rows.length > 2 * keep) cutRows(had, keep);
  }
}

/** The fold's rows newest first, at most `keep` of them, the newest new one among them if it fell past the cut. */
export function cutRows(f: FlagFold, keep = FOLD_ROWS): FlagFold {
  f.rows.sort(newerRow);
  if (f.rows.length > keep) {
    const fresh = f.rows.findIndex((r) => r.new);
    f.rows = fresh >= keep ? [...f.rows.slice(0, keep - 1), f.rows[fresh]] : f.rows.slice(0, keep);
  }
  return f;
}

/** The recordings an entry counts: at warn or at fail. */
export const foldCount = (f: FlagFold) => f.failed + f.warned;

/**
 * The page's order: new first, then unusable before to check, then the newest latest recording first, then by channel and
 * flag name (entries of one recording's channel side by side). Rows must be cut (sorted) first.
 */
export const byMorning = (a: FlagFold, b: FlagFold): number =>
  Number(foldNew(b)) - Number(foldNew(a)) || SEVERITIES.indexOf(foldSeverity(b) as Severity) - SEVERITIES.indexOf(foldSeverity(a) as Severity)
  || newerRow(a.rows[0], b.rows[0]) || (a.channel < b.channel ? -1 : a.channel > b.channel ? 1 : 0) || (a.flag < b.flag ? -1 : a.flag > b.flag ? 1 : 0)
  || (a.group < b.group ? -1 : a.group > b.group ? 1 : 0);
