// The longest run of exactly repeated values (flatline): its length in repeats and where it ends, and how many samples repeat in all.
import type { ChannelContext } from '../stage.js';
import { Accumulating, type Accumulator } from './accumulator.js';
import { fusedOf } from './pass.js';

export class RepeatRuns extends Accumulating<'prev' | 'run' | 'longest' | 'end' | 'repeats'> implements Accumulator {
  readonly each = 'if (v === $prev) { $repeats++; if (++$run > $longest) { $longest = $run; $end = n; } } else $run = 0; $prev = v;';
  constructor() { super('repeat-runs', { prev: NaN, run: 0, longest: 0, end: 0, repeats: 0 }); }
  /** Repeats in the longest run (a run of k equal samples counts k − 1). */
  get longest() { return this.get('longest'); }
  get longestEnd() { return this.get('end'); }
  /** Samples equal to the one before them, over the whole channel. */
  get repeats() { return this.get('repeats'); }
}

export const repeatRunsOf = (ctx: ChannelContext) => fusedOf(ctx, 'repeat-runs', () => new RepeatRuns());
