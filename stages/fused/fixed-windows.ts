// Sum, sum of squares and largest magnitude of the finite samples over back-to-back windows of `length` samples, and
// how many were finite (a missing sample is left out, the window keeps its place in time): the rows of windows.parquet.
import type { ChannelContext } from '../stage.js';
import { Accumulating, type Accumulator } from './accumulator.js';
import { fusedOf } from './pass.js';

export type FixedWindowListener = (sum: number, sumSquares: number, peak: number, end: number, finite: number) => void;

export class FixedWindows extends Accumulating<'length' | 'k' | 'm' | 'sum' | 'sq' | 'peak' | 'ended'> implements Accumulator {
  /** The windows ended in the current chunk (sum, sum of squares, peak, index past the end, finite samples), handed on after it. */
  readonly arrays = { ends: new Float64Array(0) };
  readonly finite = '$sum += v; $sq += v * v; $m++; const a = v < 0 ? -v : v; if (a > $peak) $peak = a;';
  readonly each = 'if (++$k === $length) { const e = 5 * $ended++; $ends[e] = $sum; $ends[e + 1] = $sq; $ends[e + 2] = $peak; $ends[e + 3] = n + 1; $ends[e + 4] = $m; $sum = 0; $sq = 0; $peak = 0; $k = 0; $m = 0; }';
  private readonly listeners: FixedWindowListener[] = [];
  readonly edge: { k: number; ended: number };

  constructor(private readonly length: number) {
    super(`fixed-windows:${length}`, { length, k: 0, m: 0, sum: 0, sq: 0, peak: 0, ended: 0 });
    this.edge = { k: length - 1, ended: 0 };
  }

  /** Calls `l` at the end of every window with its finite samples' sum, sum of squares and largest magnitude, the index just past it and how many were finite. */
  listen(l: FixedWindowListener): this { this.listeners.push(l); return this; }

  beforeChunk(x: Float64Array): void {
    const most = 5 * (Math.floor(x.length / this.length) + 1);
    if (this.arrays.ends.length < most) this.arrays.ends = new Float64Array(most);
  }

  afterChunk(): void {
    const ended = this.get('ended'), e = this.arrays.ends;
    for (let w = 0; w < ended; w++) for (const l of this.listeners) l(e[5 * w], e[5 * w + 1], e[5 * w + 2], e[5 * w + 3], e[5 * w + 4]);
    this.set('ended', 0);
  }
}

export const fixedWindowsOf = (ctx: ChannelContext, length: number) => fusedOf(ctx, `fixed-windows:${length}`, () => new FixedWindows(length));
