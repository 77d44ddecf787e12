// Samples far from the chunk's median in units of its robust spread: median and 1.4826 × median absolute deviation
// (Hampel 1974) of every STRIDE-th finite sample of the chunk (Rousseeuw & Croux 1993 for the constant), then each
// sample beyond `sigmas` of them is handed to a listener.
import type { ChannelContext } from '../stage.js';
import { Accumulating, type Accumulator } from './accumulator.js';
import { fusedOf } from './pass.js';
import { median } from '../dsp/median.js';

const STRIDE = 8;

export class RobustOutliers extends Accumulating<'med' | 'limit' | 'found'> implements Accumulator {
  /** Indices of the current chunk's outliers, handed to the listener after it. */
  readonly arrays = { hits: new Float64Array(0) };
  // NaN is never beyond the limit; a chunk with too small a sample has an infinite limit.
  readonly each = 'const d = v - $med; if (d > $limit || d < -$limit) $hits[$found++] = n;';
  private sub = new Float64Array(0);

  constructor(private readonly sigmas: number, private readonly floor: number, private readonly out: (n: number) => void) {
    super(`robust-outliers:${sigmas}:${floor}`, { med: 0, limit: Infinity, found: 0 });
  }

  afterChunk(): void {
    const found = this.get('found'), hits = this.arrays.hits;
    for (let i = 0; i < found; i++) this.out(hits[i]);
    this.set('found', 0);
  }

  beforeChunk(x: Float64Array): void {
    if (this.arrays.hits.length < x.length) this.arrays.hits = new Float64Array(x.length);
    if (this.sub.length < Math.ceil(x.length / STRIDE)) this.sub = new Float64Array(Math.ceil(x.length / STRIDE));
    // Every STRIDE-th finite sample is plenty for the median and MAD of a chunk, at a fraction of the sorting.
    let m = 0;
    for (let i = 0; i < x.length; i += STRIDE) if (x[i] - x[i] === 0) this.sub[m++] = x[i];
    if (m < 16) { this.set('limit', Infinity); return; }
    const part = this.sub.subarray(0, m);
    const med = median(part);
    for (let i = 0; i < m; i++) part[i] = Math.abs(part[i] - med);
    const mad = median(part);
    this.set('med', med);
    this.set('limit', this.sigmas * Math.max(1.4826 * mad, this.floor, 1e-300));
  }
}

/** Outliers beyond `sigmas` robust standard deviations (at least `floor` each), reported to `out` by sample index. */
export const robustOutliersOf = (ctx: ChannelContext, sigmas: number, floor: number, out: (n: number) => void) =>
  fusedOf(ctx, `robust-outliers:${sigmas}:${floor}`, () => new RobustOutliers(sigmas, floor, out));
