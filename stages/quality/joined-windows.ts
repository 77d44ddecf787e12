// Longer back-to-back windows joined from the fused pass's shorter ones: a stage that wants 1 s windows rides on the 0.1 s
// windows every channel's quality group keeps for the report (evidence.ts), so the kernel does no more work a sample.
import { fixedWindowsOf, type FixedWindowListener } from '../fused/fixed-windows.js';
import type { ChannelContext } from '../stage.js';

/**
 * Calls `listener` for back-to-back windows of about `length` samples: whole windows of `part` samples, as many as come
 * nearest to `length` (exactly `length` where `part` divides it), their sums, sums of squares and finite counts added and
 * their peaks' largest kept; a window shorter than `part` is the pass's own. Returns the joined windows' length in samples.
 */
export function joinedWindowsOf(ctx: ChannelContext, length: number, part: number, listener: FixedWindowListener): number {
  if (length < part) { fixedWindowsOf(ctx, length).listen(listener); return length; }
  const parts = joinedLength(length, part) / part;
  let k = 0, sum = 0, sq = 0, peak = 0, finite = 0;
  fixedWindowsOf(ctx, part).listen((s, q, p, end, m) => {
    sum += s; sq += q; finite += m; if (p > peak) peak = p;
    if (++k < parts) return;
    listener(sum, sq, peak, end, finite);
    k = 0; sum = 0; sq = 0; peak = 0; finite = 0;
  });
  return parts * part;
}

/** The length in samples of the windows `joinedWindowsOf` makes for `length` from parts of `part`. */
export const joinedLength = (length: number, part: number) => (length < part ? length : Math.round(length / part) * part);
