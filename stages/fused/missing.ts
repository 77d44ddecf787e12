// Missing samples (NaN or infinite): how many, and the first.
import type { ChannelContext } from '../stage.js';
import { Accumulating, type Accumulator } from './accumulator.js';
import { fusedOf } from './pass.js';

export class Missing extends Accumulating<'count' | 'first'> implements Accumulator {
  readonly each = 'if (v - v !== 0) { if ($count++ === 0) $first = n; }';
  constructor() { super('missing', { count: 0, first: -1 }); }
  get count() { return this.get('count'); }
  get first() { return this.get('first'); }
}

export const missingOf = (ctx: ChannelContext) => fusedOf(ctx, 'missing', () => new Missing());
