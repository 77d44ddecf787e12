// A verdict the deadband holds rests on the verdicts before it. Where that chain runs back across stored recordings whose
// figures do not compare (another version, other options, another declaration: no verdict until computed again), the hold
// cannot be carried forward; a whole run, which computes them, may hold a change the run's own points then lose.
import { eraAt } from './baseline.js';
import type { ScoredFeature, ScoredPoint } from './changes.js';
import { limitsFor, type TrendOptions } from './options.js';
import { causesOf, type StaleCauseName } from './stale-cause.js';
import { nearness, type Nearness } from './verdict.js';

/** Whether a point's held verdict depends on the verdict before it: it lies within the deadband of a threshold it no longer passes. */
export function leansOnBefore(p: ScoredPoint, near: Nearness): boolean {
  if (!p.verdict || p.verdict === 'alarm') return false;
  return near.alarm || (p.verdict === 'steady' && near.changed);
}

/**
 * The stale points (indices, nearest the run's points first) that the held verdicts of the run's points rest on: between a
 * point of the run leaning on the one before and the last point whose verdict stands on its own. Empty when every hold carries.
 */
export function staleUnderHolds(f: ScoredFeature, o: TrendOptions): number[] {
  const s = f.series, stale = s.stale[f.k];
  if (o.deadband === 0 || !stale.includes(1)) return [];
  const limits = limitsFor(o, f.feature.name, s);
  const under = new Set<number>();
  // Stale points since the last point with a verdict, and those the last verdict's hold rests on.
  let pending: number[] = [], restsOn: number[] = [], era = -1;
  for (let i = 0; i < s.size; i++) {
    // A restarted baseline holds nothing over from the one before.
    const e = eraAt(f.eras, s.time[i]);
    if (e !== era) { era = e; pending = []; restsOn = []; }
    if (stale[i]) { pending.push(i); continue; }
    const p = f.raw(i);
    if (!p?.verdict) continue;
    restsOn = leansOnBefore(p, nearness(p, o, limits)) ? [...pending, ...restsOn] : [];
    pending = [];
    if (s.inRun[i]) for (const j of restsOn) under.add(j);
  }
  return [...under].sort((a, b) => b - a);
}

/** A channel of the run whose features may hold a change across stale recordings that were not computed again. */
export interface HeldAcrossStale { group: string; channel: string; channel_unit: string; features: string[]; stale_recordings: number; stored: StaleCauseName[] }

/** Per channel, the features whose holds rest on stale recordings, how many such recordings and why they are stale. */
export function heldAcrossStale(scored: readonly ScoredFeature[], o: TrendOptions): HeldAcrossStale[] {
  const byChannel = new Map<string, HeldAcrossStale & { recordings: Set<number>; cause: number }>();
  for (const f of scored) {
    const under = staleUnderHolds(f, o);
    if (!under.length) continue;
    const s = f.series, key = `${s.group}\u0000${s.channel}\u0000${s.unit}`;
    const c = byChannel.get(key) ?? byChannel.set(key, { group: s.group, channel: s.channel, channel_unit: s.unit, features: [], stale_recordings: 0, stored: [], recordings: new Set(), cause: 0 }).get(key)!;
    c.features.push(f.feature.name);
    for (const j of under) { c.recordings.add(s.recording[j]); c.cause |= s.staleCause[f.k][j]; }
  }
  return [...byChannel.values()].map(({ recordings, cause, ...c }) => ({ ...c, stale_recordings: recordings.size, stored: causesOf(cause) }));
}
