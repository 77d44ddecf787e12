// Samples far from the chunk's median in units of its robust spread: median and 1.4826 × median absolute deviation
// (Hampel 1974) of every STRIDE-th finite sample of the chunk (Rousseeuw & Croux 1993 for the constant), then each
// sample beyond `sigmas` of them is handed to a listener.
import { scratchOf, type ChannelContext } from '../stage.js';
import { freshBuffer } from '../scratch.js';
import { Accumulating, type Accumulator } from './accumulator.js';
import { fusedOf } from './pass.js';
import { medianBins } from '../dsp/median.js';
import { robustSpread } from '../dsp/robust-spread.js';

const STRIDE = 8;

const KEPT = 1024;

export class RobustOutliers extends Accumulating<'med' | 'limit' | 'found' | 'room'> implements Accumulator {
  /** Indices of the current chunk's outliers (the first KEPT of them), handed to the listener after it. */
  readonly arrays: { hits: Float64Array };
  // NaN is never beyond the limit; a chunk with too small a sample has an infinite limit.
  readonly each = 'const d = v - $med; if (d > $limit || d < -$limit) { if ($found < $room) $hits[$found] = n; $found++; }';
  private sub: Float64Array = new Float64Array(0);
  private readonly bins = medianBins();

  constructor(private readonly sigmas: number, private readonly floor: number, private readonly out: (n: number) => void, private readonly buffer: (length: number) => Float64Array = freshBuffer) {
    super(`robust-outliers:${sigmas}:${floor}`, { med: 0, limit: Infinity, found: 0, room: KEPT });
    this.arrays = { hits: buffer(KEPT) };
  }

  /** The current chunk's median, from which its outliers' excursions are taken. */
  get median() { return this.get('med'); }

  afterChunk(x: Float64Array, n0: number): void {
    const found = this.get('found'), hits = this.arrays.hits;
    if (found <= KEPT) for (let i = 0; i < found; i++) this.out(hits[i]);
    else {
      // A chunk with more outliers than the buffer holds (rare): find them again, in order.
      const med = this.get('med'), limit = this.get('limit');
      for (let i = 0; i < x.length; i++) { const d = x[i] - med; if (d > limit || d < -limit) this.out(n0 + i); }
    }
    this.set('found', 0);
  }

  beforeChunk(x: Float64Array): void {
    if (this.sub.length < Math.ceil(x.length / STRIDE)) this.sub = this.buffer(Math.ceil(x.length / STRIDE));
    const m = finiteEvery(x, STRIDE, this.sub);
    if (m < 16) { this.set('limit', Infinity); return; }
    const { centre, sigma } = robustSpread(this.sub.subarray(0, m), this.bins);
    this.set('med', centre);
    this.set('limit', this.sigmas * Math.max(sigma, this.floor, 1e-300));
  }
}

// Each loop in a function of its own: V8 (Node 20) optimised a one-function version on stack in its first loop, before
// the code after it had run, and then left every later call on that code's exit at the unvisited comparison, interpreting
// the rest of the call (every chunk of every channel of a run).

/** Every stride-th finite sample of x, into out; how many. Plenty for a chunk's median and MAD, at a fraction of the sorting. */
export function finiteEvery(x: Float64Array, stride: number, out: Float64Array): number {
  let m = 0;
  for (let i = 0; i < x.length; i += stride) if (x[i] - x[i] === 0) out[m++] = x[i];
  return m;
}

/** Outliers beyond `sigmas` robust standard deviations (at least `floor` each), reported to `out` by sample index. */
export const robustOutliersOf = (ctx: ChannelContext, sigmas: number, floor: number, out: (n: number) => void) =>
  fusedOf(ctx, `robust-outliers:${sigmas}:${floor}`, () => new RobustOutliers(sigmas, floor, out, scratchOf(ctx)));
