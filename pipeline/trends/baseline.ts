// A channel's baseline: its first N usable recordings by start time, or those starting in a declared period.
import { usable, type Series } from './history.js';
import type { Baseline } from './options.js';
import { medianAndMad } from './robust.js';

export interface BaselineStats {
  /** Point indices of the series that form the baseline. */
  members: number[];
  median: number;
  mad: number;
  /** Enough members to score against: N of N, or at least one in a period. */
  complete: boolean;
}

/** Baseline points of a series: usable (data quality not fail) and accepted by `has` (a value present), first N or within the period. */
export function baselineMembers(s: Series, b: Baseline, has: (i: number) => boolean = () => true): number[] {
  const members: number[] = [];
  for (let i = 0; i < s.size; i++) {
    if (!usable(s, i) || !has(i)) continue;
    if ('first' in b) { if (members.length === b.first) break; members.push(i); }
    else if (s.time[i] >= b.fromMs && s.time[i] < b.untilMs) members.push(i);
  }
  return members;
}

/** The baseline of feature k of a series: its members, median and median absolute deviation. */
export function baselineOf(s: Series, k: number, b: Baseline): BaselineStats {
  const values = s.values[k];
  const members = baselineMembers(s, b, (i) => Number.isFinite(values[i]));
  const { median, mad } = medianAndMad(members.map((i) => values[i]));
  return { members, median, mad, complete: 'first' in b ? members.length === b.first : members.length > 0 };
}
