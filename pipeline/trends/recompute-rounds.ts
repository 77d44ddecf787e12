// Recomputing stored recordings in rounds: what the history names is reduced again, the history read again, and what it
// names then (a recording failing when recomputed leaves its part to another) taken in the next round, each once.
import type { History } from './history.js';
import type { TrendsBasis } from './trends.js';

/**
 * From `basis`, while its history names recordings not yet recomputed (`found`, given the round and those done, keyed by
 * `keyOf`), recomputes them and reads the basis again, for `rounds` rounds at most. Returns the last basis and what was
 * recomputed, by recording, in the order found.
 */
export async function recomputeInRounds<T>(basis: TrendsBasis, read: () => Promise<TrendsBasis>, recompute: (recordings: string[]) => Promise<void>,
  found: (history: History, round: number, done: ReadonlyMap<string, T>) => T[], keyOf: (t: T) => string, rounds: number): Promise<{ basis: TrendsBasis; done: Map<string, T> }> {
  const done = new Map<string, T>();
  for (let round = 0; round < rounds && basis.history; round++) {
    const names: string[] = [];
    for (const t of found(basis.history, round, done)) {
      const key = keyOf(t);
      if (!done.has(key)) { done.set(key, t); names.push(key); }
    }
    if (!names.length) break;
    await recompute(names);
    basis = await read();
  }
  return { basis, done };
}
