// Samples at or beyond two limits (saturation): how many, the first, and the longest run of them in a row; and, of those,
// how many lie beyond two farther limits (checked only for samples already at the first ones, so clean data pays nothing).
import type { ChannelContext } from '../stage.js';
import { Accumulating, type Accumulator } from './accumulator.js';
import { fusedOf } from './pass.js';

export class LimitRuns extends Accumulating<'lo' | 'hi' | 'count' | 'first' | 'run' | 'longest' | 'end' | 'farLo' | 'farHi' | 'far'> implements Accumulator {
  // Every sample: NaN is never at a limit and breaks a run.
  readonly each = 'if (v >= $hi || v <= $lo) { $count++; if (v >= $farHi || v <= $farLo) $far++; if ($first < 0) $first = n; if (++$run > $longest) { $longest = $run; $end = n; } } else $run = 0;';
  constructor(lo: number, hi: number, farLo = -Infinity, farHi = Infinity) {
    super(`limit-runs:${lo}:${hi}:${farLo}:${farHi}`, { lo, hi, count: 0, first: -1, run: 0, longest: 0, end: 0, farLo, farHi, far: 0 });
  }
  get count() { return this.get('count'); }
  get first() { return this.get('first'); }
  get longest() { return this.get('longest'); }
  /** Index of the last sample of the longest run. */
  get longestEnd() { return this.get('end'); }
  /** Of the samples counted, those at or beyond the farther limits. */
  get far() { return this.get('far'); }
}

export const limitRunsOf = (ctx: ChannelContext, lo: number, hi: number, farLo = -Infinity, farHi = Infinity) =>
  fusedOf(ctx, `limit-runs:${lo}:${hi}:${farLo}:${farHi}`, () => new LimitRuns(lo, hi, farLo, farHi));
