// Central moments to the fourth order, extremes and missing values of a channel, chunk by chunk in the fused pass:
// sums of deviations from a provisional mean (the running mean, or a chunk's first finite sample), corrected to the
// chunk's own mean (Chan, Golub & LeVeque 1983) and folded into the recording's with combineMoments (Pébay 2008).
import type { ChannelContext } from '../stage.js';
import { combineMoments, emptyMoments, type Moments } from '../dsp/moments.js';
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
    const s = (k: 'shift' | 'n' | 's1' | 's2' | 's3' | 's4' | 'min' | 'max') => this.get(k), n = s('n'), nonFinite = x.length - n;
    if (n > 0) {
      const s1 = s('s1'), s2 = s('s2'), s3 = s('s3'), s4 = s('s4'), c = s1 / n;
      const m2 = Math.max(0, s2 - s1 * c);
      const m3 = s3 - 3 * c * s2 + 2 * c * c * s1;
      const m4 = s4 - 4 * c * s3 + 6 * c * c * s2 - 3 * c * c * c * s1;
      this.total = combineMoments(this.total, { n, mean: s('shift') + c, m2, m3, m4, min: s('min'), max: s('max'), nonFinite });
    } else this.total = { ...this.total, nonFinite: this.total.nonFinite + nonFinite };
    for (const k of ['n', 's1', 's2', 's3', 's4'] as const) this.set(k, 0);
  }

  moments(): Moments { return this.total; }
}

/** The channel's moments, accumulated once in the fused pass and read by every stage that needs them. */
export const momentsOf = (ctx: ChannelContext) => fusedOf(ctx, 'moments', () => new MomentsAccumulator());
