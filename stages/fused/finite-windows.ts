// Sums and sums of squares over consecutive windows of `length` finite samples (missing samples are skipped, not
// counted): the offset's 1 s window means and the report's RMS trend.
import type { ChannelContext } from '../stage.js';
import { State, type Accumulator } from './accumulator.js';
import { fusedOf } from './pass.js';

export type WindowListener = (sum: number, sumSquares: number, length: number) => void;

export class FiniteWindows implements Accumulator {
  readonly key: string;
  private readonly s: State<'length' | 'k' | 'sum' | 'sq'>;
  readonly names: readonly string[];
  readonly state: Float64Array;
  private readonly listeners: WindowListener[] = [];
  readonly calls = { end: (sum: number, sq: number, length: number) => { for (const l of this.listeners) l(sum, sq, length); } };
  readonly finite = '$sum += v; $sq += v * v; if (++$k === $length) { $end($sum, $sq, $length, 0); $sum = 0; $sq = 0; $k = 0; }';

  constructor(length: number) {
    this.key = `finite-windows:${length}`;
    this.s = new State({ length, k: 0, sum: 0, sq: 0 });
    this.names = this.s.names;
    this.state = this.s.values;
  }

  /** Calls `l` at the end of every window with its sum, sum of squares and length. */
  listen(l: WindowListener): this { this.listeners.push(l); return this; }
}

export const finiteWindowsOf = (ctx: ChannelContext, length: number) => fusedOf(ctx, `finite-windows:${length}`, () => new FiniteWindows(length));
