// Samples at or beyond two limits (saturation): how many, the first, and the longest run of them in a row.
import type { ChannelContext } from '../stage.js';
import { Accumulating, type Accumulator } from './accumulator.js';
import { fusedOf } from './pass.js';

export class LimitRuns extends Accumulating<'lo' | 'hi' | 'count' | 'first' | 'run' | 'longest' | 'end'> implements Accumulator {
  // Every sample: NaN is never at a limit and breaks a run.
  readonly each = 'if (v >= $hi || v <= $lo) { $count++; if ($first < 0) $first = n; if (++$run > $longest) { $longest = $run; $end = n; } } else $run = 0;';
  constructor(lo: number, hi: number) { super(`limit-runs:${lo}:${hi}`, { lo, hi, count: 0, first: -1, run: 0, longest: 0, end: 0 }); }
  get count() { return this.get('count'); }
  get first() { return this.get('first'); }
  get longest() { return this.get('longest'); }
  /** Index of the last sample of the longest run. */
  get longestEnd() { return this.get('end'); }
}

export const limitRunsOf = (ctx: ChannelContext, lo: number, hi: number) => fusedOf(ctx, `limit-runs:${lo}:${hi}`, () => new LimitRuns(lo, hi));
