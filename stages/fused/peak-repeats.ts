// The largest magnitude among the finite samples and how many samples hold it exactly: a waveform flattened at one value
// repeats its largest sample, where an undistorted one reaches its largest sample about once.
import type { ChannelContext } from '../stage.js';
import { Accumulating, type Accumulator } from './accumulator.js';
import { fusedOf } from './pass.js';

export class PeakRepeats extends Accumulating<'top' | 'count'> implements Accumulator {
  // A larger magnitude starts the count again; the branch is taken rarely once the running peak has settled.
  readonly finite = 'const a = v < 0 ? -v : v; if (a >= $top) { if (a > $top) { $top = a; $count = 0; } $count++; }';
  constructor() { super('peak-repeats', { top: 0, count: 0 }); }
  /** The largest finite magnitude (0 before any finite sample). */
  get top() { return this.get('top'); }
  /** How many finite samples hold that magnitude (either sign). */
  get count() { return this.get('count'); }
}

export const peakRepeatsOf = (ctx: ChannelContext) => fusedOf(ctx, 'peak-repeats', () => new PeakRepeats());
