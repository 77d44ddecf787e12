// The longest run of exactly repeated values (flatline): its length in repeats and where it ends.
import type { ChannelContext } from '../stage.js';
import { State, type Accumulator } from './accumulator.js';
import { fusedOf } from './pass.js';

export class RepeatRuns implements Accumulator {
  readonly key = 'repeat-runs';
  private readonly s = new State({ prev: NaN, run: 0, longest: 0, end: 0 });
  readonly names = this.s.names;
  readonly state = this.s.values;
  readonly each = 'if (v === $prev) { if (++$run > $longest) { $longest = $run; $end = n; } } else $run = 0; $prev = v;';

  /** Repeats in the longest run (a run of k equal samples counts k − 1). */
  get longest() { return this.s.get('longest'); }
  get longestEnd() { return this.s.get('end'); }
}

export const repeatRunsOf = (ctx: ChannelContext) => fusedOf(ctx, 'repeat-runs', () => new RepeatRuns());
