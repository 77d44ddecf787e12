// Spike bursts: outlying samples grouped into bursts at most `widest` samples long, each a spike when every sample within
// `guard` samples before and after it is no outlier and keeps under `fraction` of the burst's largest excursion from the
// median: an impulse (a glitch, interference) stands out from both sides, where a band-limited waveform ringing through the
// threshold does not (an outlier test in a moving window, after Hampel's identifier; Pearson 2002, IEEE Trans. Control Syst. Technol.).
// A spike must also stand beyond `sigmas` robust standard deviations of the `reach` samples on each side of it (Hampel's
// identifier in a window each side): the chunk's spread is set by its quiet part where the level rises or steps within
// it, and an ordinary crest of the loud part passes that threshold, but not one of its own surroundings.
import { medianBins } from '../dsp/median.js';
import { robustSpread } from '../dsp/robust-spread.js';

/** The longest burst that counts as a spike, in samples: a glitch of the converter or a pick-up lasts one to a few samples (ours). */
export const WIDEST_SPIKE = 3;
/** Samples either side of a burst that must stay well below it (ours). */
export const SPIKE_GUARD = 8;
/**
 * The neighbours' largest excursion, as a share of the burst's: a waveform band-limited to f ≤ fs/2.56 falls from a crest no
 * lower than cos(2π·f/fs) ≥ 0.77 of it one sample away (Szegő's inequality, as in TruePeak), so a ring-down keeps its
 * neighbours above this; noise under a spike at the 10-σ threshold passes it unless a neighbour exceeds 5 σ (Gaussian:
 * 5.7·10⁻⁷ a sample, normal table). Our choice between the two.
 */
export const SPIKE_FRACTION = 0.5;
/**
 * Samples on each side of a burst whose robust spread it must stand out from (ours): 20 ms at 12.8 kHz, short against a
 * run-up's rise, and enough for 1.4826 × MAD within some 7 % (its efficiency 37 %: 1/√(0.37·2·256), common practice).
 */
export const SPIKE_REACH = 256;
/** Fewest finite samples a side needs for its spread to be judged (ours). */
const FEWEST_AROUND = 16;

const EMPTY = new Float64Array(0);

/** Judges a stream's outliers (handed over in order) into spikes from the samples around them, chunk by chunk. */
export class SpikeBursts {
  /** Spikes found. */
  count = 0;
  /** Samples beyond the threshold in the spikes found. */
  samples = 0;
  /** The first spike's first sample, or −1. */
  first = -1;
  /** Outliers not yet judged, in order. */
  private readonly queue: number[] = [];
  /** Deviations from their chunk's median of the stream's latest samples, by sample number modulo its length. */
  private readonly ring: Float64Array;
  /** The same samples as they are, for the spread on each side of a burst. */
  private readonly level: Float64Array;
  /** One side's samples, the spread's scratch. */
  private readonly side: Float64Array;
  private readonly bins = medianBins();
  private x: Float64Array = EMPTY;
  private n0 = 0;
  private med = 0;
  private seen = 0;
  /** The last outlier judged. */
  private previous = -Infinity;

  constructor(
    readonly widest = WIDEST_SPIKE, readonly guard = SPIKE_GUARD, readonly fraction = SPIKE_FRACTION,
    private readonly onSpike: (first: number, samples: number) => void = () => {},
    readonly sigmas = 10, private readonly floor = 0, readonly reach = SPIKE_REACH,
  ) {
    // A burst waiting for its right-hand neighbours reaches back at most widest − 1 + 2·max(guard, reach) samples.
    this.ring = new Float64Array(widest + 2 * Math.max(guard, reach));
    this.level = new Float64Array(this.ring.length);
    this.side = new Float64Array(reach);
  }

  /** An outlying sample, in order. */
  outlier(at: number): void { this.queue.push(at); }

  /** The chunk whose outliers were just handed over: samples n0 … n0 + x.length − 1, with its median. */
  chunk(x: Float64Array, n0: number, med: number): void {
    this.x = x; this.n0 = n0; this.med = med;
    this.seen = n0 + x.length;
    this.judge(false);
    // The chunk's last samples, kept for bursts near its end (the chunk's buffer is not ours to keep).
    const R = this.ring.length;
    for (let i = Math.max(0, x.length - R); i < x.length; i++) { this.ring[(n0 + i) % R] = x[i] - med; this.level[(n0 + i) % R] = x[i]; }
    this.x = EMPTY; this.n0 = this.seen;
  }

  /** The stream's end: the bursts still waiting are judged with the neighbours there are. */
  end(): void { this.judge(true); }

  private deviation(i: number): number {
    return i >= this.n0 ? this.x[i - this.n0] - this.med : this.ring[i % this.ring.length];
  }

  private value(i: number): number {
    return i >= this.n0 ? this.x[i - this.n0] : this.level[i % this.level.length];
  }

  /** Whether the burst start … end stands beyond `sigmas` robust standard deviations of the samples from `from` to `to` − 1. */
  private outstands(start: number, end: number, from: number, to: number): boolean {
    let m = 0;
    for (let k = Math.max(0, from); k < to; k++) { const v = this.value(k); if (v - v === 0) this.side[m++] = v; }
    if (m < FEWEST_AROUND) return true; // too little on this side to judge: the other side and the chunk's spread decide
    const { centre, sigma } = robustSpread(this.side.subarray(0, m), this.bins);
    const limit = this.sigmas * Math.max(sigma, this.floor);
    for (let k = start; k <= end; k++) if (Math.abs(this.value(k) - centre) > limit) return true;
    return false;
  }

  /** Whether the burst stands out from the spread on both sides of it, not only from its chunk's. */
  private outstandsAround(start: number, end: number): boolean {
    const right = Math.min(this.seen, end + 1 + this.reach);
    return this.outstands(start, end, start - this.reach, start) && this.outstands(start, end, end + 1, right);
  }

  private judge(atEnd: boolean): void {
    const q = this.queue, { widest, guard, fraction } = this;
    let i = 0;
    while (i < q.length) {
      const start = q[i];
      if (!atEnd && start + widest - 1 + Math.max(guard, this.reach) >= this.seen) break; // its right-hand neighbours have not all arrived
      let j = i;
      while (j + 1 < q.length && q[j + 1] <= start + widest - 1) j++;
      const end = q[j];
      let peak = 0;
      for (let k = start; k <= end; k++) peak = Math.max(peak, Math.abs(this.deviation(k)));
      const under = fraction * peak, last = Math.min(this.seen - 1, end + guard);
      // No other outlier within the guard either side: all those up to end + guard have been handed over.
      let alone = start - this.previous > guard && (j + 1 >= q.length || q[j + 1] - end > guard);
      for (let k = Math.max(0, start - guard); k < start && alone; k++) if (Math.abs(this.deviation(k)) > under) alone = false;
      for (let k = end + 1; k <= last && alone; k++) if (Math.abs(this.deviation(k)) > under) alone = false;
      if (alone && this.outstandsAround(start, end)) {
        if (this.count++ === 0) this.first = start;
        this.samples += j - i + 1;
        this.onSpike(start, j - i + 1);
      }
      this.previous = end;
      i = j + 1;
    }
    q.splice(0, i);
  }
}
