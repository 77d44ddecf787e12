// Sorts a tacho's pulses into good intervals, missing pulses and extra pulses, holding a revolution's worth of intervals.

/** What the train found, in the units of the edge times (fractional samples). */
export interface PulseSink {
  /** Consecutive good pulses at a and b. */
  interval(a: number, b: number): void;
  /** `count` pulses missing between the good pulses at a and b (a dropout, a dirty tape). */
  missing(a: number, b: number, count: number): void;
  /** A pulse at `at` between two good ones that are a whole interval apart (a scratch, electrical noise). */
  extra(at: number): void;
  /** An interval from a to b that is neither a good one nor whole missing pulses; left out of the speed. */
  irregular(a: number, b: number): void;
}

/** Edges gathered before the first reference interval is taken: the median of their intervals outvotes one bad pulse among them. */
const LEARN_EDGES = 6;

// Each interval is held against the mean interval of the last revolution (common practice for pulse-train checks):
// within ±tolerance it is good; a whole multiple of it means pulses are missing; an early pulse is extra when the next one
// lands a whole interval after the last good one. Pulses are taken as evenly spaced around the shaft.
export class PulseTrain {
  private learning: number[] | null = [];
  private last = Number.NaN;
  private pending = Number.NaN;
  private readonly recent: number[] = [];

  constructor(private readonly pulsesPerRev: number, private readonly sink: PulseSink, private readonly tolerance = 0.25) {}

  edge(t: number): void {
    if (!this.learning) return this.classify(t);
    this.learning.push(t);
    if (this.learning.length === LEARN_EDGES) this.startFrom(this.learning);
  }

  /** The train has ended: a short train is judged on what it has; an early pulse with no successor stays unexplained. */
  end(): void {
    if (this.learning) this.startFrom(this.learning);
    if (!Number.isNaN(this.pending)) this.sink.irregular(this.last, this.pending);
    this.pending = Number.NaN;
  }

  private startFrom(edges: number[]): void {
    this.learning = null;
    if (edges.length < 2) return;
    const gaps = edges.slice(1).map((t, i) => t - edges[i]).sort((a, b) => a - b);
    this.recent.push(gaps[Math.floor((gaps.length - 1) / 2)]);
    this.last = edges[0];
    for (const t of edges.slice(1)) this.classify(t);
  }

  private classify(t: number): void {
    const reference = this.recent.reduce((s, v) => s + v, 0) / this.recent.length;
    const near = (r: number) => Math.abs(r - 1) <= this.tolerance;
    if (!Number.isNaN(this.pending)) {
      const early = this.pending;
      this.pending = Number.NaN;
      if (near((t - this.last) / reference)) {
        this.sink.extra(early);
        return this.accept(t);
      }
      this.sink.irregular(this.last, early);
      this.last = early;
    }
    const r = (t - this.last) / reference;
    if (r < 1 - this.tolerance) { this.pending = t; return; }
    if (r > 1 + this.tolerance) {
      const count = Math.round(r) - 1;
      if (count >= 1 && near(r / (count + 1))) this.sink.missing(this.last, t, count);
      else this.sink.irregular(this.last, t);
      this.last = t;
      return;
    }
    this.accept(t);
  }

  private accept(t: number): void {
    this.sink.interval(this.last, t);
    this.recent.push(t - this.last);
    if (this.recent.length > this.pulsesPerRev) this.recent.shift();
    this.last = t;
  }
}
