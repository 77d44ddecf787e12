// What is new in a run's changes: a channel feature changed or at an alarm limit that the output folder's previous report did
// not hold at that level (absent, steady since, or changed where it is now at an alarm limit), or whose change has grown by
// its threshold since it was last told (a level by the change threshold in dB, a figure that is no level by the score
// threshold). The reported verdicts are kept in cache/, each carried over while a run gives
// its channel feature no verdict (a rig that skipped a night, data unusable).
import { mkdir, readFile } from 'node:fs/promises';
import { dirname, join } from 'node:path';
import { writeFileAtomic } from '../outputs/atomic.js';
import type { ChangeItem, ChangesReport } from './changes.js';

/** One channel feature as the run reported it. */
export interface Reported {
  group: string; channel: string; channel_unit: string; feature: string; verdict: 'changed' | 'alarm';
  /** The level change in dB when it was last told new (level-like features), so that a change that keeps growing is told again. */
  change_db?: number | null;
  /** The robust score when it was last told new: the growth of a figure that is no level (kurtosis, a frequency), which has no change in dB. */
  score?: number | null;
}

/** What a run keeps for the next: the channel features it reported changed or at an alarm limit (names only, no paths). */
export interface ReportedChanges { reported: Reported[] }

export const reportedPath = (out: string) => join(out, 'cache', 'reported-changes.json');

/** A channel feature's key: its group, channel, channel unit (a unit changed makes another history) and feature. */
export const changeKey = (c: Pick<Reported, 'group' | 'channel' | 'channel_unit' | 'feature'>) => `${c.group}\u0000${c.channel}\u0000${c.channel_unit}\u0000${c.feature}`;

const RANK = { changed: 1, alarm: 2 } as const;

/** The earlier report, or null where none is kept (a first run, cache/ deleted) or it cannot be read: then everything is new. */
export async function readReported(out: string): Promise<ReportedChanges | null> {
  try {
    const r = JSON.parse(await readFile(reportedPath(out), 'utf8')) as ReportedChanges;
    return Array.isArray(r?.reported) ? r : null;
  } catch {
    return null;
  }
}

/** Whether a change has grown, in the same direction, by at least `by` (dB, or score) since it was last told (`told`): news again. */
export const grownSince = (now: number | null | undefined, told: number | null | undefined, by: number): boolean =>
  now != null && told != null && Math.sign(now) === Math.sign(told) && Math.abs(now) - Math.abs(told) >= by;

/**
 * Whether a change has grown since it was last told, each in its own terms: a change with a size in dB (a level) by the change
 * threshold in dB; one without (kurtosis, a frequency, a level whose value is not positive) by the score threshold in its
 * robust score, the measure its verdict reads. A change told with a size in dB and now without one, or the other way, has not.
 */
export function grownInItsTerms(now: Pick<Reported, 'change_db' | 'score'>, told: Pick<Reported, 'change_db' | 'score'>, thresholds: { change_db: number; score: number }): boolean {
  if (now.change_db != null || told.change_db != null) return grownSince(now.change_db, told.change_db, thresholds.change_db);
  return grownSince(now.score, told.score, thresholds.score);
}

/**
 * The report with each item marked `new` (and counted in `news`): alarms first, new or not (a declared limit still exceeded
 * is never pushed down by fresher changes), then the new changes, then the rest, each part in the report's own order (by
 * strength). An item is new unless the earlier report held it at its verdict or above and its change
 * has not grown by its threshold since it was last told (`grownInItsTerms`).
 */
export function markNews(r: ChangesReport, earlier: ReportedChanges | null): ChangesReport {
  const before = new Map((earlier?.reported ?? []).map((x) => [changeKey(x), x]));
  const isNew = (c: ChangeItem) => {
    const told = before.get(changeKey(c));
    return !told || (RANK[told.verdict] ?? 0) < RANK[c.verdict] || grownInItsTerms(c, told, r.thresholds);
  };
  const items: ChangeItem[] = r.items.map((c) => ({ ...c, new: isNew(c) }));
  const alarms = items.filter((c) => c.verdict === 'alarm'), changed = items.filter((c) => c.verdict !== 'alarm');
  return { ...r, items: [...alarms, ...changed.filter((c) => c.new), ...changed.filter((c) => !c.new)], news: { new: items.filter((c) => c.new).length, compared: earlier != null } };
}

/**
 * What this run reports, for the next: its items at their verdicts, and the earlier report's other channel features, but
 * for those whose latest verdict in this run is steady (`steady`, by changeKey): a change clears only when a run sees it clear.
 */
export function reportedNow(r: ChangesReport, earlier: ReportedChanges | null, steady: ReadonlySet<string>): ReportedChanges {
  const before = new Map((earlier?.reported ?? []).map((x) => [changeKey(x), x]));
  // A change not told new keeps the size it was told at, so that growth is measured against what the lab last heard.
  const now = r.items.map(({ group, channel, channel_unit, feature, verdict, change_db, score, new: fresh }): Reported => {
    const told = fresh ? undefined : before.get(changeKey({ group, channel, channel_unit, feature }));
    return { group, channel, channel_unit, feature, verdict, change_db: told?.change_db ?? change_db ?? null, score: told?.score ?? score ?? null };
  });
  const keys = new Set(now.map(changeKey));
  const carried = (earlier?.reported ?? []).filter((x) => !keys.has(changeKey(x)) && !steady.has(changeKey(x)));
  return { reported: [...now, ...carried] };
}

export async function keepReported(out: string, r: ReportedChanges): Promise<void> {
  await mkdir(dirname(reportedPath(out)), { recursive: true });
  await writeFileAtomic(reportedPath(out), JSON.stringify(r) + '\n');
}
