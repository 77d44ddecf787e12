// Running sum of squares over the last `length` finite samples (linear integration; a missing sample is skipped, the
// window held), its largest value once a window is full; the ring is re-added once per turn so rounding cannot accumulate.
import { scratchOf, type ChannelContext } from '../stage.js';
import { freshBuffer } from '../scratch.js';
import { Accumulating, type Accumulator } from './accumulator.js';
import { fusedOf } from './pass.js';

export class RunningMeanSquare extends Accumulating<'length' | 'at' | 'seen' | 'sum' | 'max'> implements Accumulator {
  readonly arrays: { ring: Float64Array };
  readonly finite = 'const q = v * v; $sum += q - $ring[$at]; $ring[$at] = q; $seen++; if (++$at === $length) { $at = 0; let t = 0; for (let j = 0; j < $length; j++) t += $ring[j]; $sum = t; } if ($seen >= $length && $sum > $max) $max = $sum;';

  /** A ring of one sample: every sample then takes the turn's branch, whose re-sum is one addition, not a window's. */
  readonly edge = { length: 1, at: 0, seen: 1 };

  constructor(length: number, buffer: (length: number) => Float64Array = freshBuffer) {
    super(`running-mean-square:${length}`, { length, at: 0, seen: 0, sum: 0, max: -1 });
    this.arrays = { ring: buffer(length) };
  }

  /** Finite samples seen. */
  get seen() { return this.get('seen'); }
  /** Largest sum of squares over a full window (−1 before the first). */
  get max() { return this.get('max'); }
}

export const runningMeanSquareOf = (ctx: ChannelContext, length: number) => fusedOf(ctx, `running-mean-square:${length}`, () => new RunningMeanSquare(length, scratchOf(ctx)));
