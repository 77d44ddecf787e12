// Holds carried by a --since run: where a verdict of the period leans, through the deadband, on stored recordings whose figures
// do not compare (another version, other options, another declaration), those recordings are reduced again, nearest the
// period first, until the chain reaches a verdict that stands on its own, so the period's verdicts are a whole run's.
import { scoreHistory } from './changes.js';
import { staleUnderHolds } from './held-across-stale.js';
import type { TrendOptions } from './options.js';
import type { TrendsBasis } from './trends.js';

/**
 * Rounds, and the recordings of one chain taken in the first (doubled each round after: 4 + 8 + 16 + 32 at most), so a hold
 * over a few nights costs a few recomputations, and one over months is told rather than recomputed in a nightly run.
 */
export const CARRY_ROUNDS = 4, FIRST_TAKEN = 4;

/** Recomputes the stale recordings the period's holds rest on, round by round, reading the basis again after each; returns what it recomputed. */
export async function carryHolds(basis: TrendsBasis, read: () => Promise<TrendsBasis>, recompute: (recordings: string[]) => Promise<void>, o: TrendOptions, rounds = CARRY_ROUNDS, first = FIRST_TAKEN): Promise<{ basis: TrendsBasis; recomputed: string[] }> {
  const done = new Set<string>();
  for (let round = 0; round < rounds && basis.history; round++) {
    const h = basis.history, todo = new Set<string>();
    for (const f of scoreHistory(h, o)) {
      const names = staleUnderHolds(f, o).map((j) => h.recordings[f.series.recording[j]]).filter((r) => !done.has(r));
      for (const r of names.slice(0, first << round)) todo.add(r);
    }
    if (!todo.size) break;
    for (const r of todo) done.add(r);
    await recompute([...todo]);
    basis = await read();
  }
  return { basis, recomputed: [...done].sort() };
}
