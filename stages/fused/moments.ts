// Central moments to the fourth order, extremes and missing values of a channel, chunk by chunk in the fused pass:
// sums of deviations from a provisional mean (the running mean, or a chunk's first finite sample), corrected to the
// chunk's own mean (Chan, Golub & LeVeque 1983) and folded into the recording's in place with foldMoments (Pébay 2008).
import type { ChannelContext } from '../stage.js';
import { emptyMoments, foldMoments, type Moments } from '../dsp/moments.js';
import { Accumulating, type Accumulator } from './accumulator.js';
import { fusedOf } from './pass.js';

export class MomentsAccumulator extends Accumulating<'shift' | 'n' | 's1' | 's2' | 's3' | 's4' | 'min' | 'max'> implements Accumulator {
  readonly finite = '$n++; const d = v - $shift, d2 = d * d; $s1 += d; $s2 += d2; $s3 += d2 * d; $s4 += d2 * d2; if (v < $min) $min = v; if (v > $max) $max = v;';
  private total: Moments = emptyMoments();

  constructor() { super('moments', { shift: 0, n: 0, s1: 0, s2: 0, s3: 0, s4: 0, min: Infinity, max: -Infinity }); }

  beforeChunk(x: Float64Array): void {
    let shift = this.total.mean;
    if (this.total.n === 0) for (let i = 0; i < x.length; i++) if (x[i] - x[i] === 0) { shift = x[i]; break; }
    this.set('shift', shift);
  }

  afterChunk(x: Float64Array): void {
    // Read by name into locals and folded in place: run for every chunk and every envelope block, it allocates nothing.
    const n = this.get('n'), nonFinite = x.length - n;
    if (n > 0) {
      const s1 = this.get('s1'), s2 = this.get('s2'), s3 = this.get('s3'), s4 = this.get('s4'), c = s1 / n;
      const m2 = Math.max(0, s2 - s1 * c);
      const m3 = s3 - 3 * c * s2 + 2 * c * c * s1;
      const m4 = s4 - 4 * c * s3 + 6 * c * c * s2 - 3 * c * c * c * s1;
      foldMoments(this.total, n, this.get('shift') + c, m2, m3, m4, this.get('min'), this.get('max'), nonFinite);
    } else this.total.nonFinite += nonFinite;
    this.set('n', 0); this.set('s1', 0); this.set('s2', 0); this.set('s3', 0); this.set('s4', 0);
  }

  /** A copy: the running total keeps changing in place. */
  moments(): Moments { return { ...this.total }; }
}

/** The channel's moments, accumulated once in the fused pass and read by every stage that needs them. */
export const momentsOf = (ctx: ChannelContext) => fusedOf(ctx, 'moments', () => new MomentsAccumulator());
