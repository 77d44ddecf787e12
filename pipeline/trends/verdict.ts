// The verdict on one value: steady, changed (beyond the change thresholds or a warn limit) or alarm (at or beyond an alarm limit).
import type { TrendOptions } from './options.js';

export type Verdict = 'steady' | 'changed' | 'alarm';
export const VERDICTS: readonly Verdict[] = ['steady', 'changed', 'alarm'];

/** Which declared limit a value is at or beyond. */
export function limitReached(value: number, limit: { warn?: number; alarm?: number } | undefined): 'warn' | 'alarm' | null {
  if (limit?.alarm != null && value >= limit.alarm) return 'alarm';
  if (limit?.warn != null && value >= limit.warn) return 'warn';
  return null;
}

/**
 * Limits apply on their own; the change thresholds need a complete baseline (`scored`). Null: no verdict yet (baseline forming,
 * no limit reached), or none possible (the value is missing).
 */
export function verdictOf(
  v: { value: number; changeDb: number | null; score: number | null; scored: boolean; limit: 'warn' | 'alarm' | null },
  o: Pick<TrendOptions, 'changeDb' | 'score'>,
): Verdict | null {
  if (!Number.isFinite(v.value)) return null;
  if (v.limit === 'alarm') return 'alarm';
  if (v.limit === 'warn') return 'changed';
  if (!v.scored) return null;
  if ((v.changeDb != null && Math.abs(v.changeDb) > o.changeDb) || (v.score != null && Math.abs(v.score) > o.score)) return 'changed';
  // A zero spread with a differing value (score null) is a change.
  if (v.score == null && v.changeDb == null) return 'changed';
  return 'steady';
}
