// A channel's baseline: its first N usable recordings by start time, or those starting in a declared period; formed again
// from a declared date on where the spec restarts it (a sensor replaced), each stretch of the history with its own.
import { usable, type Series } from './history.js';
import type { Baseline, BaselineRestart } from './options.js';
import { medianAndMad } from './robust.js';

export interface BaselineStats {
  /** Point indices of the series that form the baseline. */
  members: number[];
  median: number;
  mad: number;
  /** Enough members to score against: N of N, or at least one in a period, and none held by a figure of other options. */
  complete: boolean;
  /** Baseline places held by recordings whose figure was computed under other spec options, another declaration or another version. */
  stale: number;
  /** The points holding those places. */
  staleAt: number[];
}

/** A stretch of a series' history, start times in [fromMs, untilMs), and the baseline formed in it (null restart: the spec's own). */
export interface Era { fromMs: number; untilMs: number; baseline: Baseline; restart: BaselineRestart | null }

/** The whole history under the spec's baseline, cut at each restart that applies to the series, each later stretch with its first N. */
export function erasOf(s: Series, b: Baseline): Era[] {
  const cuts = b.restarts.filter((r) => r.applies(s.group, s.channel)).sort((x, y) => x.fromMs - y.fromMs);
  const eras: Era[] = [{ fromMs: -Infinity, untilMs: cuts[0]?.fromMs ?? Infinity, baseline: b, restart: null }];
  cuts.forEach((r, j) => eras.push({ fromMs: r.fromMs, untilMs: cuts[j + 1]?.fromMs ?? Infinity, baseline: { first: r.first, exclude: b.exclude, restarts: [] }, restart: r }));
  return eras;
}

/** Index of the era holding start time `t`. */
export function eraAt(eras: readonly Era[], t: number): number {
  let j = eras.length - 1;
  while (j > 0 && t < eras[j].fromMs) j--;
  return j;
}

const WHOLE = { fromMs: -Infinity, untilMs: Infinity };

/**
 * Baseline points of a series within an era: usable (data quality not fail), not excluded by the spec, and accepted by `has` (a value present), first N or within the
 * period. A point `stale` (its figure computed under other options, or its verdict under other thresholds) keeps its place among
 * the first N, usable or not as stored, so the baseline never slides onto later recordings, but is not a member; `held` lists
 * the points holding such places.
 */
export function baselineMembers(s: Series, b: Baseline, has: (i: number) => boolean = () => true, stale: (i: number) => boolean = () => false, era: { fromMs: number; untilMs: number } = WHOLE): { members: number[]; held: number[] } {
  const members: number[] = [];
  const held: number[] = [];
  for (let i = 0; i < s.size; i++) {
    if (!(s.time[i] >= era.fromMs && s.time[i] < era.untilMs)) continue;
    // A recording the spec leaves out of the baseline (a capture known to be unrepresentative) takes no place in it; one whose
    // verdict is stale holds its place whatever it said (recomputed, it may be usable today).
    if (s.excluded[i] || (!usable(s, i) && !stale(i))) continue;
    if ('first' in b) { if (members.length + held.length === b.first) break; }
    else if (!(s.time[i] >= b.fromMs && s.time[i] < b.untilMs)) continue;
    if (stale(i)) held.push(i);
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

/** The baseline of feature k of a series in an era: its members, median and median absolute deviation. */
export function baselineOf(s: Series, k: number, era: Era): BaselineStats {
  const values = s.values[k], b = era.baseline;
  const { members, held } = baselineMembers(s, b, (i) => Number.isFinite(values[i]), (i) => s.stale[k][i] === 1, era);
  const { median, mad } = medianAndMad(members.map((i) => values[i]));
  return { members, median, mad, stale: held.length, staleAt: held, complete: held.length === 0 && ('first' in b ? members.length === b.first : members.length > 0) };
}

/** What the recordings that could take a place in feature k's baseline in an era hold: how many, and how many fail the checks, are left out, lack the feature or can serve. */
export function baselinePlaces(s: Series, k: number, era: Era): { inPlace: number; failing: number; excluded: number; missing: number; members: number } {
  const b = era.baseline, values = s.values[k];
  let inPlace = 0, failing = 0, excluded = 0, missing = 0, members = 0;
  for (let i = 0; i < s.size; i++) {
    if (!(s.time[i] >= era.fromMs && s.time[i] < era.untilMs)) continue;
    if (!('first' in b) && !(s.time[i] >= b.fromMs && s.time[i] < b.untilMs)) continue;
    inPlace++;
    if (s.excluded[i]) excluded++;
    else if (!usable(s, i)) failing++;
    else if (!Number.isFinite(values[i])) missing++;
    else members++;
  }
  return { inPlace, failing, excluded, missing, members };
}

/**
 * How many more recordings a baseline of the spec's first N still needs, where too few recordings exist yet is all it lacks
 * (none fails the checks, is left out or lacks the feature, and no restart formed it again); null otherwise.
 */
export function recordingsToCome(s: Series, k: number, era: Era): number | null {
  const b = era.baseline;
  if (!('first' in b) || era.restart) return null;
  const p = baselinePlaces(s, k, era);
  return p.failing || p.excluded || p.missing ? null : b.first - p.members;
}

/**
 * Why feature k's baseline in an era has not formed (it is not complete and holds no stale place): what the recordings in its
 * place hold, in words, with what to do. A baseline of the first N that is still forming says how far it has come.
 */
export function whyNotFormed(s: Series, k: number, era: Era): string {
  const b = era.baseline;
  const { inPlace, failing, excluded, missing, members } = baselinePlaces(s, k, era);
  const left = [
    failing ? `${failing} ${failing === 1 ? 'fails' : 'fail'} the data-quality checks` : '',
    excluded ? `${excluded} left out by trends.baseline.exclude` : '',
    missing ? `${missing} without the feature` : '',
  ].filter(Boolean).join(', ');
  const restarted = era.restart ? ` since its restart ${era.restart.text}` : '';
  if ('first' in b) return `${members} of the ${b.first} usable recordings it needs so far${restarted}${left ? ` (${left})` : ''}; it forms as more are stored`;
  const period = b.text;
  if (!inPlace) return `no recording of the channel starts in its baseline period ${period}; give a period the channel was recorded in (trends.baseline)`;
  return `none of its ${inPlace} ${inPlace === 1 ? 'recording' : 'recordings'} in its baseline period ${period} can serve (${left}); give a period with usable recordings (trends.baseline)`;
}
