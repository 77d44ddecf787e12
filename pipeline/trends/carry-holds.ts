// Holds carried by a --since run: where a verdict of the period leans, through the deadband, on stored recordings whose figures
// do not compare (another version, other options, another declaration), those recordings are reduced again, nearest the
// period first, until the chain reaches a verdict that stands on its own, so the period's verdicts are a whole run's.
import { scoreHistory } from './changes.js';
import { staleUnderHolds } from './held-across-stale.js';
import type { History } from './history.js';
import type { TrendOptions } from './options.js';
import { recomputeInRounds } from './recompute-rounds.js';
import type { TrendsBasis } from './trends.js';

/**
 * Rounds, and the recordings of one chain taken in the first (doubled each round after: 4 + 8 + 16 + 32 at most), so a hold
 * over a few nights costs a few recomputations, and one over months is told rather than recomputed in a nightly run.
 */
export const CARRY_ROUNDS = 4, FIRST_TAKEN = 4;

/** Recomputes the stale recordings the period's holds rest on, round by round, reading the basis again after each; returns what it recomputed. */
export async function carryHolds(basis: TrendsBasis, read: () => Promise<TrendsBasis>, recompute: (recordings: string[]) => Promise<void>, o: TrendOptions, rounds = CARRY_ROUNDS, first = FIRST_TAKEN): Promise<{ basis: TrendsBasis; recomputed: string[] }> {
  // Each chain's next recordings not yet recomputed, nearest the period first.
  const found = (h: History, round: number, done: ReadonlyMap<string, string>) => scoreHistory(h, o).flatMap((f) =>
    staleUnderHolds(f, o).map((j) => h.recordings[f.series.recording[j]]).filter((r) => !done.has(r)).slice(0, first << round));
  const carried = await recomputeInRounds(basis, read, recompute, found, (r) => r, rounds);
  return { basis: carried.basis, recomputed: [...carried.done.keys()].sort() };
}
