// Missing samples (NaN or infinite): how many, the first, the longest run of them, and how many in the chunk just
// walked, which the channel's other products read to branch once a chunk (clean chunks take their plain path).
import type { ChannelContext } from '../stage.js';
import { Accumulating, type Accumulator } from './accumulator.js';
import { fusedOf } from './pass.js';

export class Missing extends Accumulating<'count' | 'first' | 'last' | 'run' | 'longest' | 'end'> implements Accumulator {
  // Only a missing sample does any work: a run goes on while each missing sample follows the last one.
  readonly each = 'if (v - v !== 0) { if ($count++ === 0) $first = n; $run = n === $last + 1 ? $run + 1 : 1; $last = n; if ($run > $longest) { $longest = $run; $end = n; } }';
  private before = 0;
  private chunk = 0;
  constructor() { super('missing', { count: 0, first: -1, last: -2, run: 0, longest: 0, end: -1 }); }
  beforeChunk(): void { this.before = this.get('count'); }
  afterChunk(): void { this.chunk = this.get('count') - this.before; }
  get count() { return this.get('count'); }
  get first() { return this.get('first'); }
  /** The longest run of missing samples in a row, and the index of its last sample. */
  get longest() { return this.get('longest'); }
  get longestEnd() { return this.get('end'); }
  /** Missing samples in the chunk the pass walked last. */
  get inChunk() { return this.chunk; }
}

/**
 * The channel's missing samples. A product that reads `inChunk` in its own push asks for this before it makes itself
 * (ctx.shared keeps the order products are made in), so the pass has walked the chunk first.
 */
export const missingOf = (ctx: ChannelContext) => fusedOf(ctx, 'missing', () => new Missing());
