// Spike bursts: outlying samples grouped into bursts at most `widest` samples long, each a spike when every sample within
// `guard` samples before and after it is no outlier and keeps under `fraction` of the burst's largest excursion from the
// median: an impulse (a glitch, interference) stands out from both sides, where a band-limited waveform ringing through the
// threshold does not (an outlier test in a moving window, after Hampel's identifier; Pearson 2002, IEEE Trans. Control Syst. Technol.).

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
  private x: Float64Array = EMPTY;
  private n0 = 0;
  private med = 0;
  private seen = 0;
  /** The last outlier judged. */
  private previous = -Infinity;

  constructor(
    readonly widest = WIDEST_SPIKE, readonly guard = SPIKE_GUARD, readonly fraction = SPIKE_FRACTION,
    private readonly onSpike: (first: number, samples: number) => void = () => {},
  ) {
    // A burst waiting for its right-hand neighbours reaches back at most widest − 1 + 2·guard samples.
    this.ring = new Float64Array(widest + 2 * guard);
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
    for (let i = Math.max(0, x.length - R); i < x.length; i++) this.ring[(n0 + i) % R] = x[i] - med;
    this.x = EMPTY; this.n0 = this.seen;
  }

  /** The stream's end: the bursts still waiting are judged with the neighbours there are. */
  end(): void { this.judge(true); }

  private deviation(i: number): number {
    return i >= this.n0 ? this.x[i - this.n0] - this.med : this.ring[i % this.ring.length];
  }

  private judge(atEnd: boolean): void {
    const q = this.queue, { widest, guard, fraction } = this;
    let i = 0;
    while (i < q.length) {
      const start = q[i];
      if (!atEnd && start + widest - 1 + guard >= this.seen) break; // its right-hand neighbours have not all arrived
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
      if (alone) {
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
