// The longest stretch of exact zeros (dropout): its length and where it ends.
import type { ChannelContext } from '../stage.js';
import { State, type Accumulator } from './accumulator.js';
import { fusedOf } from './pass.js';

export class ZeroRuns implements Accumulator {
  readonly key = 'zero-runs';
  private readonly s = new State({ run: 0, longest: 0, end: 0 });
  readonly names = this.s.names;
  readonly state = this.s.values;
  readonly each = 'if (v === 0) { if (++$run > $longest) { $longest = $run; $end = n; } } else $run = 0;';

  get longest() { return this.s.get('longest'); }
  get longestEnd() { return this.s.get('end'); }
}

export const zeroRunsOf = (ctx: ChannelContext) => fusedOf(ctx, 'zero-runs', () => new ZeroRuns());
