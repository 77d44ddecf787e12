// Stale baseline places renewed by a --since run: the stored recordings whose figures of another version, other options or
// another declaration hold places in the baselines the period is held against are reduced again, so the baselines form
// under the present ones the same morning, rather than wait for a whole run.
import type { TrendOptions } from './options.js';
import { causesOf, STALE_CAUSES, storedText, type StaleCauseName } from './stale-cause.js';
import { recomputeInRounds } from './recompute-rounds.js';
import { stalePlaces, type StalePlace } from './stale-places.js';
import type { TrendsBasis } from './trends.js';

/** Rounds of recomputation at most: a round after the first only follows recordings that failed, or became unusable, when recomputed. */
export const RENEW_ROUNDS = 4;

/**
 * Reads the trends' basis; while its history holds stale baseline places of recordings not yet recomputed, recomputes them
 * and reads it again (a recording failing when recomputed leaves its place to the next, which may be stale too). Nothing
 * stale: the history is read once, and nothing is recomputed.
 */
export async function renewStaleBaselines(read: () => Promise<TrendsBasis>, recompute: (recordings: string[]) => Promise<void>, o: TrendOptions, rounds = RENEW_ROUNDS): Promise<{ basis: TrendsBasis; recomputed: StalePlace[] }> {
  const renewed = await recomputeInRounds(await read(), read, recompute, (h) => stalePlaces(h, o), (p) => p.recording, rounds);
  return { basis: renewed.basis, recomputed: [...renewed.done.values()] };
}

/** One recording recomputed for the baselines, as run.json lists it: why its stored figures did not compare, and what its reduction gave. */
export interface RecomputedForBaseline { recording: string; group: string; stored: StaleCauseName[]; why: string; status?: 'reduced' | 'failed'; reason?: string }

/** The recordings a --since run recomputed because they held stale baseline places: how many, by cause, how many failed, each one. */
export interface RecomputedForBaselines { count: number; causes: Record<StaleCauseName, number>; failed: number; recordings: RecomputedForBaseline[] }

/** The record of the recordings recomputed; `outcome` gives each one's group, the decision's why and its reduction's status and reason. */
export function recomputedRecord(places: readonly StalePlace[], outcome: (recording: string) => { group: string; why: string; status?: 'reduced' | 'failed'; reason?: string }): RecomputedForBaselines {
  const recordings = places.map((p): RecomputedForBaseline => {
    const { group, why, status, reason } = outcome(p.recording);
    return { recording: p.recording, group, stored: causesOf(p.cause), why, ...(status ? { status } : {}), ...(reason ? { reason } : {}) };
  });
  const causes = Object.fromEntries(STALE_CAUSES.map((c) => [c, recordings.filter((r) => r.stored.includes(c)).length])) as Record<StaleCauseName, number>;
  return { count: recordings.length, causes, failed: recordings.filter((r) => r.status === 'failed').length, recordings };
}

/** The terminal's lines: how many were recomputed and why, and each one that failed. */
export function recomputedLines(r: RecomputedForBaselines): string[] {
  if (!r.count) return [];
  return [
    `  BASELINE recomputed ${r.count} ${r.count === 1 ? 'recording' : 'recordings'} holding baseline places, stored ${storedText(r.causes)}, so the baselines form under this version, spec and declaration${r.failed ? `; ${r.failed} failed` : ''}; see run.json (period.recomputed_for_baselines)`,
    ...r.recordings.filter((x) => x.status === 'failed').map((x) => `  FAILED  ${x.recording} (recomputed for a baseline): ${x.reason}`),
  ];
}
