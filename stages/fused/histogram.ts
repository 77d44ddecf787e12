// Amplitude histogram of the finite samples over fixed limits; without limits, an even sample of the stream kept by
// reservoir sampling (Vitter 1985, algorithm R) for binning at the end.
import type { ChannelContext } from '../stage.js';
import { Accumulating, type Accumulator } from './accumulator.js';
import { fusedOf } from './pass.js';

export const RESERVOIR = 8192;

export class Histogram extends Accumulating<'lo' | 'scale' | 'bins' | 'seen' | 'kept' | 'seed'> implements Accumulator {
  readonly arrays: { counts: Float64Array; reservoir: Float64Array };
  readonly finite: string;
  readonly edge = { seen: RESERVOIR, kept: RESERVOIR };

  constructor(readonly limits: [number, number] | null, bins: number) {
    super(`histogram:${limits?.join(':') ?? 'reservoir'}:${bins}`, { lo: limits?.[0] ?? 0, scale: limits ? bins / (limits[1] - limits[0]) : 0, bins, seen: 0, kept: 0, seed: 0x9e3779b9 });
    this.arrays = { counts: new Float64Array(bins), reservoir: new Float64Array(limits ? 0 : RESERVOIR) };
    this.finite = limits
      // Bins per unit as one factor (a multiplication, not a division, a sample; the pictures only show the counts).
      ? 'const b = Math.floor((v - $lo) * $scale); $counts[b < 0 ? 0 : b > $bins - 1 ? $bins - 1 : b]++;'
      : `$seen++; if ($kept < ${RESERVOIR}) $reservoir[$kept++] = v; else { $seed = (Math.imul($seed, 1664525) + 1013904223) >>> 0; const j = $seed % $seen; if (j < ${RESERVOIR}) $reservoir[j] = v; }`;
  }

  get counts(): Float64Array { return this.arrays.counts; }
  /** The kept sample (without limits). */
  get sample(): Float64Array { return this.arrays.reservoir.subarray(0, this.get('kept')); }
}

export const histogramOf = (ctx: ChannelContext, limits: [number, number] | null, bins: number) =>
  fusedOf(ctx, `histogram:${limits?.join(':') ?? 'reservoir'}:${bins}`, () => new Histogram(limits, bins));
