// Sums and sums of squares over consecutive windows of `length` finite samples (missing samples are skipped, not
// counted): the offset's 1 s window means and the report's RMS trend.
import type { ChannelContext } from '../stage.js';
import { Accumulating, type Accumulator } from './accumulator.js';
import { fusedOf } from './pass.js';

export type WindowListener = (sum: number, sumSquares: number, length: number) => void;

export class FiniteWindows extends Accumulating<'length' | 'k' | 'sum' | 'sq' | 'ended'> implements Accumulator {
  /** The windows ended in the current chunk: sums and sums of squares, handed to the listeners after it. */
  readonly arrays = { sums: new Float64Array(0), squares: new Float64Array(0) };
  readonly finite = '$sum += v; $sq += v * v; if (++$k === $length) { $sums[$ended] = $sum; $squares[$ended] = $sq; $ended++; $sum = 0; $sq = 0; $k = 0; }';
  private readonly listeners: WindowListener[] = [];
  readonly edge: { k: number; ended: number };

  constructor(private readonly length: number) {
    super(`finite-windows:${length}`, { length, k: 0, sum: 0, sq: 0, ended: 0 });
    this.edge = { k: length - 1, ended: 0 };
  }

  /** Calls `l` at the end of every window with its sum, sum of squares and length. */
  listen(l: WindowListener): this { this.listeners.push(l); return this; }

  beforeChunk(x: Float64Array): void {
    const most = Math.floor(x.length / this.length) + 1;
    if (this.arrays.sums.length < most) { this.arrays.sums = new Float64Array(most); this.arrays.squares = new Float64Array(most); }
  }

  afterChunk(): void {
    const ended = this.get('ended'), { sums, squares } = this.arrays;
    for (let w = 0; w < ended; w++) for (const l of this.listeners) l(sums[w], squares[w], this.length);
    this.set('ended', 0);
  }
}

export const finiteWindowsOf = (ctx: ChannelContext, length: number) => fusedOf(ctx, `finite-windows:${length}`, () => new FiniteWindows(length));
