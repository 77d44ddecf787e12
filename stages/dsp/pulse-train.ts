// Sorts a tacho's pulses into good intervals, missing pulses and extra pulses, holding a revolution's worth of intervals.

/** What the train found, in the units of the edge times (fractional samples). */
export interface PulseSink {
  /** Consecutive good pulses at a and b. */
  interval(a: number, b: number): void;
  /** `count` pulses missing between the good pulses at a and b (a dropout, a dirty tape). */
  missing(a: number, b: number, count: number): void;
  /** A pulse at `at` between two good ones that are a whole interval apart (a scratch, electrical noise, a second mark). */
  extra(at: number): void;
  /** An interval from a to b that is neither a good one nor whole missing pulses; left out of the speed. */
  irregular(a: number, b: number): void;
}

/**
 * Edges gathered before the first reference interval is taken: enough for the candidates below to be told apart. With a stray
 * pulse in every revolution, 12 edges (6 revolutions) let strays near half a revolution make a rhythm as steady as the true one
 * (2 in 1000 random phases); 24 edges left none in 20,000 (measured, test/pulse-strays.test.ts).
 */
const LEARN_EDGES = 24;
/** Good intervals in a row within this share of each other count as steady, for judging a candidate reference (our choice). */
const STEADY = 0.05;

/** Counts what a train finds, for judging a reference interval on the learning edges. */
class Tally implements PulseSink {
  steady = 0;
  covered = 0;
  faults = 0;
  private previous = Number.NaN;
  interval(a: number, b: number) {
    if (Math.abs(b - a - this.previous) <= STEADY * this.previous) this.steady++;
    this.previous = b - a;
    this.covered += b - a;
  }
  missing() { this.faults++; }
  extra() { this.faults++; }
  irregular() { this.faults++; }
}

const median = (v: number[]) => { const s = [...v].sort((a, b) => a - b); return s[Math.floor((s.length - 1) / 2)]; };

// Each interval is held against the mean interval of the last revolution (common practice for pulse-train checks):
// within ±tolerance it is good; a whole multiple of it means pulses are missing; an early pulse is extra when the next one
// lands a whole interval after the last good one. Of two pulses both within the tolerance of the expected time, the nearer
// one is good and the other extra (gating on the expected time), so a stray pulse just before or after a true one does not
// replace it. Pulses are taken as evenly spaced around the shaft.
export class PulseTrain {
  private learning: number[] | null = [];
  private last = Number.NaN;
  private pending = Number.NaN;
  /** A good pulse not yet confirmed: a later one still within the tolerance of the expected time may be nearer to it. */
  private tentative = Number.NaN;
  private readonly recent: number[] = [];

  constructor(private readonly pulsesPerRev: number, private readonly sink: PulseSink, private readonly tolerance = 0.25) {}

  edge(t: number): void {
    if (!this.learning) return this.classify(t);
    this.learning.push(t);
    if (this.learning.length === LEARN_EDGES) this.startFrom(this.learning);
  }

  /**
   * The train has ended at `at` (the time of the last sample): a short train is judged on what it has; an early pulse with no
   * successor stays unexplained, and so does a last pulse off its expected time by d when the train ends within d after that
   * time, since a pulse nearer to it could still have come.
   */
  end(at = Infinity): void {
    if (this.learning) this.startFrom(this.learning);
    const t = this.tentative;
    if (!Number.isNaN(t)) {
      const expected = this.last + this.recent.reduce((s, v) => s + v, 0) / this.recent.length;
      if (at >= expected + Math.abs(t - expected)) this.confirm();
      else { this.tentative = Number.NaN; this.sink.irregular(this.last, t); }
    }
    if (!Number.isNaN(this.pending)) this.sink.irregular(this.last, this.pending);
    this.pending = Number.NaN;
  }

  // The first reference interval from the learning edges, robust to a stray pulse in every interval: the median of the gaps
  // between successive edges, else any one gap between an edge and the next or the one after next (when a stray splits each
  // interval, no successive gap is a whole one). Each candidate is tried on the same edges (a last pulse that a later one might
  // still displace left out); one replaces the median only when it gives more good intervals in a row that agree within STEADY
  // (a true pulse train is regular, pulses taken at a stray's irregular phase are not), or as many covering more time, or the
  // same time with fewer faults. A clean train keeps the median, which no candidate beats.
  private startFrom(edges: number[]): void {
    this.learning = null;
    if (edges.length < 2) return;
    const gaps = (step: number) => edges.slice(step).map((t, i) => t - edges[i]);
    const candidates = [median(gaps(1)), ...gaps(1), ...gaps(2)].filter((g) => g > 0);
    if (!candidates.length) return;
    let best = candidates[0], most: Tally | null = null;
    for (const reference of candidates) {
      const tally = new Tally();
      const trial = new PulseTrain(this.pulsesPerRev, tally, this.tolerance);
      trial.startWith(edges, reference);
      const better = !most || tally.steady > most.steady || (tally.steady === most.steady
        && (tally.covered > most.covered * (1 + 1e-9) || (tally.covered >= most.covered * (1 - 1e-9) && tally.faults < most.faults)));
      if (better) { best = reference; most = tally; }
    }
    this.startWith(edges, best);
  }

  private startWith(edges: number[], reference: number): void {
    this.learning = null;
    this.recent.push(reference);
    this.last = edges[0];
    for (const t of edges.slice(1)) this.classify(t);
  }

  private classify(t: number): void {
    const reference = this.recent.reduce((s, v) => s + v, 0) / this.recent.length;
    const near = (r: number) => Math.abs(r - 1) <= this.tolerance;
    if (!Number.isNaN(this.tentative)) {
      // Still within the tolerance of the expected time: the nearer of the two is the good pulse.
      if (near((t - this.last) / reference)) {
        const expected = this.last + reference;
        if (Math.abs(t - expected) < Math.abs(this.tentative - expected)) { this.sink.extra(this.tentative); this.tentative = t; }
        else this.sink.extra(t);
        return;
      }
      this.confirm();
    }
    if (!Number.isNaN(this.pending)) {
      const early = this.pending;
      this.pending = Number.NaN;
      if (near((t - this.last) / reference)) {
        this.sink.extra(early);
        this.tentative = t;
        return;
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
    this.tentative = t;
  }

  private confirm(): void {
    const t = this.tentative;
    if (Number.isNaN(t)) return;
    this.tentative = Number.NaN;
    this.sink.interval(this.last, t);
    this.recent.push(t - this.last);
    if (this.recent.length > this.pulsesPerRev) this.recent.shift();
    this.last = t;
  }
}
