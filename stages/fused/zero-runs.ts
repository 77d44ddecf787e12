// The longest stretch of exact zeros (dropout): its length and where it ends.
import type { ChannelContext } from '../stage.js';
import { Accumulating, type Accumulator } from './accumulator.js';
import { fusedOf } from './pass.js';

export class ZeroRuns extends Accumulating<'run' | 'longest' | 'end'> implements Accumulator {
  readonly each = 'if (v === 0) { if (++$run > $longest) { $longest = $run; $end = n; } } else $run = 0;';
  constructor() { super('zero-runs', { run: 0, longest: 0, end: 0 }); }
  get longest() { return this.get('longest'); }
  get longestEnd() { return this.get('end'); }
}

export const zeroRunsOf = (ctx: ChannelContext) => fusedOf(ctx, 'zero-runs', () => new ZeroRuns());
