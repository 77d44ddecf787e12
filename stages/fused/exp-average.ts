// Exponential average of the squared signal, y[n] = y[n−1] + α·(x[n]² − y[n−1]) from zero, and its maximum: the exact
// sampled response of a first-order averager (IEC 61672-1 time weighting).
import type { ChannelContext } from '../stage.js';
import { State, type Accumulator } from './accumulator.js';
import { fusedOf } from './pass.js';

export class ExpAverage implements Accumulator {
  readonly key: string;
  private readonly s: State<'alpha' | 'y' | 'max'>;
  readonly names: readonly string[];
  readonly state: Float64Array;
  readonly each = '$y += $alpha * (v * v - $y); if ($y > $max) $max = $y;';

  constructor(alpha: number) {
    this.key = `exp-average:${alpha}`;
    this.s = new State({ alpha, y: 0, max: 0 });
    this.names = this.s.names;
    this.state = this.s.values;
  }

  /** Largest weighted mean square so far. */
  get max() { return this.s.get('max'); }
}

export const expAverageOf = (ctx: ChannelContext, alpha: number) => fusedOf(ctx, `exp-average:${alpha}`, () => new ExpAverage(alpha));
