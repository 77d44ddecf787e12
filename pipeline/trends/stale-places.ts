// The recordings that hold stale places in the baselines a run's points are held against: stored under another version,
// other options or another declaration, they keep the baseline from forming until they are computed again.
import { baselineMembers, eraAt, erasOf } from './baseline.js';
import type { History } from './history.js';
import type { TrendOptions } from './options.js';

/** A recording holding a stale baseline place, and why it is stale (bits of StaleCause, over every place it holds). */
export interface StalePlace { recording: string; cause: number }

/** Every recording holding a stale place in a baseline that one of the run's points (inRun) is held against, by name. */
export function stalePlaces(h: History, o: TrendOptions): StalePlace[] {
  const causes = new Map<number, number>();
  for (const s of h.series) {
    const eras = erasOf(s, o.baseline);
    // The eras this run's points fall in: only their baselines bear on the run's verdicts.
    const inRunEras = new Set<number>();
    for (let i = 0; i < s.size; i++) if (s.inRun[i]) inRunEras.add(eraAt(eras, s.time[i]));
    for (const j of inRunEras) {
      o.features.forEach((_, k) => {
        const { held } = baselineMembers(s, eras[j].baseline, undefined, (i) => s.stale[k][i] === 1, eras[j]);
        for (const i of held) causes.set(s.recording[i], (causes.get(s.recording[i]) ?? 0) | s.staleCause[k][i]);
      });
    }
  }
  return [...causes].map(([r, cause]) => ({ recording: h.recordings[r], cause })).sort((a, b) => (a.recording < b.recording ? -1 : a.recording > b.recording ? 1 : 0));
}
