// Exponential average of the squared signal, y[n] = y[n−1] + α·(x[n]² − y[n−1]) from zero, and its maximum: the exact
// sampled response of a first-order averager (IEC 61672-1 time weighting). A missing sample is skipped, the average held.
import type { ChannelContext } from '../stage.js';
import { Accumulating, type Accumulator } from './accumulator.js';
import { fusedOf } from './pass.js';

export class ExpAverage extends Accumulating<'alpha' | 'y' | 'max'> implements Accumulator {
  readonly finite = '$y += $alpha * (v * v - $y); if ($y > $max) $max = $y;';
  constructor(alpha: number) { super(`exp-average:${alpha}`, { alpha, y: 0, max: 0 }); }
  /** Largest weighted mean square so far. */
  get max() { return this.get('max'); }
}

export const expAverageOf = (ctx: ChannelContext, alpha: number) => fusedOf(ctx, `exp-average:${alpha}`, () => new ExpAverage(alpha));
