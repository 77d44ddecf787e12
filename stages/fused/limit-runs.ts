// Samples at or beyond two limits (saturation): how many, the first, and the longest run of them in a row.
import type { ChannelContext } from '../stage.js';
import { State, type Accumulator } from './accumulator.js';
import { fusedOf } from './pass.js';

export class LimitRuns implements Accumulator {
  readonly key: string;
  private readonly s: State<'lo' | 'hi' | 'count' | 'first' | 'run' | 'longest' | 'end'>;
  readonly names: readonly string[];
  readonly state: Float64Array;
  // Every sample: NaN is never at a limit and breaks a run.
  readonly each = 'if (v >= $hi || v <= $lo) { $count++; if ($first < 0) $first = n; if (++$run > $longest) { $longest = $run; $end = n; } } else $run = 0;';

  constructor(lo: number, hi: number) {
    this.key = `limit-runs:${lo}:${hi}`;
    this.s = new State({ lo, hi, count: 0, first: -1, run: 0, longest: 0, end: 0 });
    this.names = this.s.names;
    this.state = this.s.values;
  }

  get count() { return this.s.get('count'); }
  get first() { return this.s.get('first'); }
  get longest() { return this.s.get('longest'); }
  /** Index of the last sample of the longest run. */
  get longestEnd() { return this.s.get('end'); }
}

export const limitRunsOf = (ctx: ChannelContext, lo: number, hi: number) => fusedOf(ctx, `limit-runs:${lo}:${hi}`, () => new LimitRuns(lo, hi));
