// A channel's baseline: its first N usable recordings by start time, or those starting in a declared period.
import { usable, type Series } from './history.js';
import type { Baseline } from './options.js';
import { medianAndMad } from './robust.js';

export interface BaselineStats {
  /** Point indices of the series that form the baseline. */
  members: number[];
  median: number;
  mad: number;
  /** Enough members to score against: N of N, or at least one in a period, and none held by a figure of other options. */
  complete: boolean;
  /** Baseline places held by recordings whose figure was computed under other spec options (recomputed by a whole run). */
  stale: number;
}

/**
 * Baseline points of a series: usable (data quality not fail), not excluded by the spec, and accepted by `has` (a value present), first N or within the
 * period. A point `stale` (its figure computed under other options) keeps its place among the first N, so the baseline never
 * slides onto later recordings, but is not a member; `held` counts such places.
 */
export function baselineMembers(s: Series, b: Baseline, has: (i: number) => boolean = () => true, stale: (i: number) => boolean = () => false): { members: number[]; held: number } {
  const members: number[] = [];
  let held = 0;
  for (let i = 0; i < s.size; i++) {
    // A recording the spec leaves out of the baseline (a capture known to be unrepresentative) takes no place in it.
    if (!usable(s, i) || s.excluded[i]) continue;
    if ('first' in b) { if (members.length + held === b.first) break; }
    else if (!(s.time[i] >= b.fromMs && s.time[i] < b.untilMs)) continue;
    if (stale(i)) held++;
    else if (has(i)) members.push(i);
  }
  return { members, held };
}

/**
 * Whether a run over the period from `sinceMs` formed this baseline from its own recordings with nothing stored before the period
 * (a new output folder, or cache/ deleted): a declared baseline period starting within the run's period needs nothing earlier.
 */
export function formedFromPeriodOnly(s: Series, base: BaselineStats, b: Baseline, sinceMs: number): boolean {
  if (!('first' in b) && b.fromMs >= sinceMs) return false;
  return base.members.some((i) => s.inRun[i] === 1) && !(s.time[0] < sinceMs);
}

/** The baseline of feature k of a series: its members, median and median absolute deviation. */
export function baselineOf(s: Series, k: number, b: Baseline): BaselineStats {
  const values = s.values[k];
  const { members, held: stale } = baselineMembers(s, b, (i) => Number.isFinite(values[i]), (i) => s.stale[k][i] === 1);
  const { median, mad } = medianAndMad(members.map((i) => values[i]));
  return { members, median, mad, stale, complete: stale === 0 && ('first' in b ? members.length === b.first : members.length > 0) };
}
