// Missing samples (NaN or infinite): how many, and the first.
import type { ChannelContext } from '../stage.js';
import { State, type Accumulator } from './accumulator.js';
import { fusedOf } from './pass.js';

export class Missing implements Accumulator {
  readonly key = 'missing';
  private readonly s = new State({ count: 0, first: -1 });
  readonly names = this.s.names;
  readonly state = this.s.values;
  readonly each = 'if (v - v !== 0) { if ($count++ === 0) $first = n; }';

  get count() { return this.s.get('count'); }
  get first() { return this.s.get('first'); }
}

export const missingOf = (ctx: ChannelContext) => fusedOf(ctx, 'missing', () => new Missing());
