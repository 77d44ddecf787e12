// Sum, sum of squares and largest magnitude over back-to-back windows of `length` samples, every sample counted
// (a missing one makes its window's figures NaN): the rows of windows.parquet.
import type { ChannelContext } from '../stage.js';
import { State, type Accumulator } from './accumulator.js';
import { fusedOf } from './pass.js';

export type FixedWindowListener = (sum: number, sumSquares: number, peak: number, end: number) => void;

export class FixedWindows implements Accumulator {
  readonly key: string;
  private readonly s: State<'length' | 'k' | 'sum' | 'sq' | 'peak'>;
  readonly names: readonly string[];
  readonly state: Float64Array;
  private readonly listeners: FixedWindowListener[] = [];
  readonly calls = { end: (sum: number, sq: number, peak: number, end: number) => { for (const l of this.listeners) l(sum, sq, peak, end); } };
  readonly each = '$sum += v; $sq += v * v; const a = v < 0 ? -v : v; if (a > $peak) $peak = a; if (++$k === $length) { $end($sum, $sq, $peak, n + 1); $sum = 0; $sq = 0; $peak = 0; $k = 0; }';

  constructor(length: number) {
    this.key = `fixed-windows:${length}`;
    this.s = new State({ length, k: 0, sum: 0, sq: 0, peak: 0 });
    this.names = this.s.names;
    this.state = this.s.values;
  }

  /** Calls `l` at the end of every window with its sum, sum of squares, largest magnitude and the index just past it. */
  listen(l: FixedWindowListener): this { this.listeners.push(l); return this; }
}

export const fixedWindowsOf = (ctx: ChannelContext, length: number) => fusedOf(ctx, `fixed-windows:${length}`, () => new FixedWindows(length));
