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
  return 'steady';
}

/** How near its thresholds a point lies, within the deadband: near a change (a change threshold or warn limit) and near an alarm limit. */
export interface Nearness { changed: boolean; alarm: boolean }

/** Whether a point lies within the deadband of its thresholds: beyond (1 − deadband) of a change threshold, or of a limit. */
export function nearness(
  v: { value: number; changeDb: number | null; score: number | null },
  o: Pick<TrendOptions, 'changeDb' | 'score' | 'deadband'>,
  limit: { warn?: number; alarm?: number } | undefined,
): Nearness {
  const d = o.deadband;
  const within = (at: number | undefined) => at != null && v.value > at - d * Math.abs(at);
  return {
    changed: (v.changeDb != null && Math.abs(v.changeDb) > o.changeDb * (1 - d)) || (v.score != null && Math.abs(v.score) > o.score * (1 - d)) || within(limit?.warn),
    alarm: within(limit?.alarm),
  };
}

/**
 * A verdict held by the deadband (alarm deadband, common practice in alarm management): once changed or alarm, a feature
 * clears only when its value is back inside its thresholds by the deadband, so a change hovering at its threshold stays
 * on the morning list rather than coming and going night by night. `previous` is the held verdict of the feature's last
 * point with a verdict.
 */
export function heldVerdict(verdict: Verdict, previous: Verdict | null, near: Nearness): Verdict {
  if (previous === 'alarm' && verdict !== 'alarm' && near.alarm) return 'alarm';
  if (previous && previous !== 'steady' && verdict === 'steady' && near.changed) return 'changed';
  return verdict;
}
