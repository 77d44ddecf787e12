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
/** A good interval within this share of the one expected from those before it counts as steady, for judging a candidate reference (our choice). */
const STEADY = 0.05;

/**
 * The most a trend may move the expected interval from the last revolution's mean: a run-up from 300 to 6000 rpm in 4 s
 * changes it by 30 % a revolution at its start (our choice: twice the tolerance a pulse is held to).
 */
const MOST_CHANGE = 0.5;

/** Good intervals [a, b] of pulse times, newest last. */
export type Intervals = [number, number][];

/** Pulse rate (pulses per unit time) over a set of intervals and its centre: the centre of their time, weighted by duration. */
export function rateOf(g: Intervals): { rate: number; centre: number } {
  let span = 0, moment = 0;
  for (const [a, b] of g) { span += b - a; moment += ((b - a) * (a + b)) / 2; }
  return { rate: g.length / span, centre: moment / span };
}

/** Slope of the pulse rate (per unit time) between two sets of good intervals (`older` before `newer`): the line through their rates at their centres. */
export function rateSlope(older: Intervals, newer: Intervals): number | null {
  const o = rateOf(older), n = rateOf(newer);
  return n.centre > o.centre ? (n.rate - o.rate) / (n.centre - o.centre) : null;
}

// A linearly changing rate ρ(t) = ρ₂ + s·(t − c₂) turns through ∫ρ dt, so the mean rate over intervals equals the rate at their
// duration-weighted centre (exact for a linear ramp: the mean of a linear function over a set is its value at the set's centroid).
// The next interval d after `last` then solves d·ρ(last + d/2) = 1: (s/2)·d² + q·d − 1 = 0 with q = ρ₂ + s·(last − c₂), taken in
// the cancellation-free form d = 2 / (q + √(q² + 2s)) (Press et al., Numerical Recipes, 3rd ed., 5.6).
/**
 * The interval expected after the pulse at `last`, from two sets of good intervals a revolution each (`older` before `newer`):
 * their rates at their centres carried forward as a straight line, so a run-up's or run-down's next pulse is expected where it
 * comes rather than a revolution's change late. Null where the line cannot be drawn (centres not apart, a rate reaching zero),
 * or would move the interval beyond ±`most` of the newer set's mean (the trend then stands on intervals a fault has spoilt).
 */
export function nextInterval(older: Intervals, newer: Intervals, last: number, most = MOST_CHANGE): number | null {
  const n = rateOf(newer), s = rateSlope(older, newer);
  if (s == null) return null;
  const q = n.rate + s * (last - n.centre), root = q * q + 2 * s;
  if (!(q > 0 && root >= 0)) return null;
  const d = 2 / (q + Math.sqrt(root)), mean = 1 / n.rate;
  return Math.abs(d / mean - 1) <= most ? d : null;
}

// Uniform deceleration α from the rate q at the last good pulse turns q·d − α·d²/2 pulses in d (kinematics of uniform
// acceleration), so an interval d of one pulse implies α₁ = 2(q·d − 1)/d²; one of two pulses (one missing) implies α + 2/d², and
// since the shaft must still turn both, q·d ≤ 4 and α₁ ≥ 1.5 α: a missing pulse reads at least half as fast again as the trend.
/** The deceleration (pulses per unit time²) an interval d of one pulse after `last` implies, and the trend's, from the rate's line through `older` and `newer`; null without a trend. */
export function impliedDeceleration(older: Intervals, newer: Intervals, last: number, d: number): { implied: number; trend: number } | null {
  const n = rateOf(newer), s = rateSlope(older, newer);
  if (s == null) return null;
  const q = n.rate + s * (last - n.centre);
  return q > 0 ? { implied: (2 * (q * d - 1)) / (d * d), trend: -s } : null;
}

/**
 * The band of the trend's deceleration a last interval's implied one may take to be a shaft coming to rest (our choice): above,
 * by the tolerance a pulse is held to, below the 1.5 a missing pulse gives at the least; below, to half of it, as friction and
 * windage fade with the speed.
 */
const TO_REST = { least: 0.5, most: 1.25 };

/**
 * Whether an interval d after the pulse at `last`, longer than the pulse tolerance allows and the last of the train, is the
 * shaft's last pulse as it slows to rest: the last two revolutions slowing, and d implying a deceleration within TO_REST of theirs.
 */
export function slowsToRest(older: Intervals, newer: Intervals, last: number, d: number, band = TO_REST): boolean {
  const a = impliedDeceleration(older, newer, last, d);
  return a != null && a.trend > 0 && a.implied >= band.least * a.trend && a.implied <= band.most * a.trend;
}

/** The longest run of good intervals each starting where the one before ended (the earliest of equals). */
function longestRun(found: Intervals): Intervals {
  let best: Intervals = [], run: Intervals = [];
  for (const iv of found) {
    if (run.length && run.at(-1)![1] !== iv[0]) run = [];
    run.push(iv);
    if (run.length > best.length) best = [...run];
  }
  return best;
}

/** Counts what a train finds, for judging a reference interval on the learning edges. */
class Tally implements PulseSink {
  steady = 0;
  covered = 0;
  faults = 0;
  /** The unbroken run of good intervals up to the last one (an extra pulse between two good ones does not break it). */
  private readonly run: Intervals = [];
  /** Whether the last good interval was found unsteady. */
  private unsteady = false;
  constructor(private readonly pulsesPerRev: number) {}
  // Steady: within STEADY of the interval the run's last two revolutions lead to expect (until the run holds them, of the last
  // good interval), and the good interval before it not found otherwise. Two intervals draw any trend, so one that a stray
  // ended or started could make the next one look steady; a true train's trend holds from one interval to the next.
  interval(a: number, b: number) {
    const p = this.pulsesPerRev, run = this.run, last = run.at(-1);
    if (last && last[1] !== a) run.length = 0;
    const expected = run.length >= 2 * p ? nextInterval(run.slice(-2 * p, -p), run.slice(-p), a) : last ? last[1] - last[0] : null;
    if (expected != null) {
      const agrees = Math.abs(b - a - expected) <= STEADY * expected;
      if (agrees && !this.unsteady) this.steady++;
      this.unsteady = !agrees;
    }
    run.push([a, b]);
    if (run.length > 2 * p) run.shift();
    this.covered += b - a;
  }
  missing() { this.faults++; }
  extra() { this.faults++; }
  irregular() { this.faults++; }
}

// Each interval is held against the mean interval of the last revolution (common practice for pulse-train checks), carried
// forward by the speed's trend over the last two revolutions (nextInterval), so a run-up or run-down is followed where it is
// rather than a revolution late: within ±tolerance it is good; a whole multiple of it means pulses are missing; an early pulse
// is extra when the next one lands a whole interval after the last good one. Of two pulses both within the tolerance of the expected time, the nearer
// one is good and the other extra (gating on the expected time), so a stray pulse just before or after a true one does not
// replace it. Pulses are taken as evenly spaced around the shaft.
export class PulseTrain {
  private learning: number[] | null = [];
  private last = Number.NaN;
  private pending = Number.NaN;
  /** A good pulse not yet confirmed: a later one still within the tolerance of the expected time may be nearer to it. */
  private tentative = Number.NaN;
  private readonly recent: number[] = [];
  /** The last two revolutions' good intervals, for the speed's trend. */
  private readonly history: Intervals = [];
  /** A pulse after a long interval that a shaft slowing to rest gives as its last: good if the train ends there, judged as before if another pulse comes. */
  private stopping = Number.NaN;

  constructor(private readonly pulsesPerRev: number, private readonly sink: PulseSink, private readonly tolerance = 0.25) {}

  edge(t: number): void {
    if (!this.learning) return this.classify(t);
    this.learning.push(t);
    if (this.learning.length === LEARN_EDGES) this.startFrom(this.learning);
  }

  /**
   * The train has ended at `at` (the time of the last sample): a short train is judged on what it has; an early pulse with no
   * successor stays unexplained, and so does a last pulse off its expected time by d when the train ends within d after that
   * time, since a pulse nearer to it could still have come. A last interval that a shaft slowing to rest gives (slowsToRest) is
   * good where the train has truly ended (`atRest`; not where a trial on the learning edges stops).
   */
  end(at = Infinity, atRest = true): void {
    if (this.learning) this.startFrom(this.learning);
    if (!Number.isNaN(this.stopping)) {
      const t = this.stopping;
      this.stopping = Number.NaN;
      if (atRest) { this.tentative = t; this.confirm(); } else this.long(t);
    }
    const t = this.tentative;
    if (!Number.isNaN(t)) {
      const expected = this.last + this.expected();
      if (at >= expected + Math.abs(t - expected)) this.confirm();
      else { this.tentative = Number.NaN; this.sink.irregular(this.last, t); }
    }
    if (!Number.isNaN(this.pending)) this.sink.irregular(this.last, this.pending);
    this.pending = Number.NaN;
  }

  // The first reference interval from the learning edges, robust to a stray pulse in every interval: the median of the gaps
  // between successive edges, else any one gap between an edge and the next or the one after next (when a stray splits each
  // interval, no successive gap is a whole one). Each candidate is tried on the same edges from its own place, the edges before
  // it sorted backwards in time, as a train ending at the last edge (a last pulse that a later one might still displace, or that
  // is the last edge, is not counted good); one replaces the median only when it gives more good intervals that agree within
  // STEADY with what the ones before lead to expect (a true pulse train is regular, or changes speed smoothly; pulses taken at a
  // stray's irregular phase do neither), or as many covering more time, or the same time with fewer faults. A clean train keeps the median, which no candidate beats.
  private startFrom(edges: number[]): void {
    this.learning = null;
    if (edges.length < 2) return;
    const gaps = (step: number) => edges.slice(step).map((t, i) => ({ at: i, gap: t - edges[i] }));
    const ones = gaps(1), middle = [...ones].sort((a, b) => a.gap - b.gap)[Math.floor((ones.length - 1) / 2)];
    const candidates = [middle, ...ones, ...gaps(2)].filter((c) => c.gap > 0);
    if (!candidates.length) return;
    let best = candidates[0], most: Tally | null = null;
    for (const c of candidates) {
      const tally = new Tally(this.pulsesPerRev);
      const trial = new PulseTrain(this.pulsesPerRev, tally, this.tolerance);
      trial.startAt(edges, c.at, c.gap);
      trial.endTrial(edges.at(-1)!);
      const better = !most || tally.steady > most.steady || (tally.steady === most.steady
        && (tally.covered > most.covered * (1 + 1e-9) || (tally.covered >= most.covered * (1 - 1e-9) && tally.faults < most.faults)));
      if (better) { best = c; most = tally; }
    }
    // Sorted again from the middle of the longest run of good intervals the best candidate found, each way with that run's
    // trend from its first step: a candidate near the start has no trend behind it, and where a stray lies close to a true
    // pulse in a fast run-up, only the trend tells them apart.
    const found: Intervals = [];
    const again = new PulseTrain(this.pulsesPerRev, { interval: (a, b) => { found.push([a, b]); }, missing() {}, extra() {}, irregular() {} }, this.tolerance);
    again.startAt(edges, best.at, best.gap);
    again.endTrial(edges.at(-1)!);
    const run = longestRun(found), p = this.pulsesPerRev;
    if (run.length < 2) return this.startAt(edges, best.at, best.gap);
    const m = Math.min(Math.max(Math.floor(run.length / 2), Math.min(2 * p, run.length - 1)), run.length - Math.min(2 * p, run.length - 1));
    const i = edges.indexOf(run[m][0]);
    this.startAt(edges, i, run[m][1] - run[m][0], run.slice(Math.max(0, m - 2 * p), m), run.slice(m, m + 2 * p));
  }

  /** Ends a trial on the learning edges at the last of them; a good pulse that is that edge is left out, as a later one might displace it. */
  private endTrial(at: number): void {
    if (this.tentative === at) this.tentative = Number.NaN;
    this.end(at, false);
  }

  // Sorting backwards is sorting the edges in reversed time (−t), where a run-up is a run-down: the same rules hold. What the
  // backward train finds is handed on in time order, and its good intervals next to the starting pulse give the forward train its
  // reference and trend.
  /**
   * Sorts `edges` taking edges[i] as a good pulse and `gap` as the interval about it: the edges before it backwards, then the
   * rest; `before` and `after`, good intervals known to end and start at edges[i], give each way its trend from the start.
   */
  private startAt(edges: number[], i: number, gap: number, before: Intervals = [], after: Intervals = []): void {
    this.learning = null;
    const p = this.pulsesPerRev, good: Intervals = [];
    if (i > 0) {
      const heard: (() => void)[] = [], sink = this.sink;
      const back = new PulseTrain(p, {
        interval: (a, b) => { good.unshift([-b, -a]); heard.push(() => sink.interval(-b, -a)); },
        missing: (a, b, count) => heard.push(() => sink.missing(-b, -a, count)),
        extra: (at) => heard.push(() => sink.extra(-at)),
        irregular: (a, b) => heard.push(() => sink.irregular(-b, -a)),
      }, this.tolerance);
      back.seed(after.map(([a, b]): [number, number] => [-b, -a]).reverse(), -edges[i], gap);
      for (let k = i - 1; k >= 0; k--) back.classify(-edges[k]);
      // The recording starts at time 0: a pulse nearer the expected time could not have come before it.
      back.end(0);
      for (let k = heard.length - 1; k >= 0; k--) heard[k]();
    }
    const behind = good.length && good.at(-1)![1] === edges[i] ? good : before;
    this.seed(behind, edges[i], gap);
    for (const t of edges.slice(i + 1)) this.classify(t);
  }

  /** Starts the train at a good pulse at `last`, after the good intervals `run` (ending there; the last revolution's kept), else with `gap`. */
  private seed(run: Intervals, last: number, gap: number): void {
    this.learning = null;
    const p = this.pulsesPerRev, kept = run.length && run.at(-1)![1] === last ? run.slice(-2 * p) : [];
    if (kept.length >= p) this.recent.push(...kept.slice(-p).map(([a, b]) => b - a));
    else this.recent.push(gap);
    this.history.push(...kept);
    this.last = last;
  }

  /**
   * The interval expected after the last good pulse: the last revolution's mean interval, carried forward by the speed's trend
   * over the last two revolutions where they are known and recent (their newer half ending at the last good pulse).
   */
  private expected(): number {
    const p = this.pulsesPerRev, h = this.history;
    const trend = h.length === 2 * p && h.at(-1)![1] === this.last ? nextInterval(h.slice(0, p), h.slice(p), this.last) : null;
    return trend ?? this.recent.reduce((s, v) => s + v, 0) / this.recent.length;
  }

  private classify(t: number): void {
    if (!Number.isNaN(this.stopping)) {
      // A pulse after it: the long interval was not the train's last, so it is judged as any other.
      const held = this.stopping;
      this.stopping = Number.NaN;
      this.long(held);
    }
    let reference = this.expected();
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
      // The confirmed pulse is the last good one now: the next is expected an interval after it.
      reference = this.expected();
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
      reference = this.expected();
    }
    const r = (t - this.last) / reference;
    if (r < 1 - this.tolerance) { this.pending = t; return; }
    if (r > 1 + this.tolerance) {
      const p = this.pulsesPerRev, h = this.history;
      if (h.length === 2 * p && h.at(-1)![1] === this.last && slowsToRest(h.slice(0, p), h.slice(p), this.last, t - this.last)) this.stopping = t;
      else this.long(t);
      return;
    }
    this.tentative = t;
  }

  /** A pulse at t too late for the expected interval: whole pulses missing before it, else an irregular interval. */
  private long(t: number): void {
    const r = (t - this.last) / this.expected(), count = Math.round(r) - 1;
    if (count >= 1 && Math.abs(r / (count + 1) - 1) <= this.tolerance) this.sink.missing(this.last, t, count);
    else this.sink.irregular(this.last, t);
    this.last = t;
  }

  private confirm(): void {
    const t = this.tentative;
    if (Number.isNaN(t)) return;
    this.tentative = Number.NaN;
    this.sink.interval(this.last, t);
    this.recent.push(t - this.last);
    if (this.recent.length > this.pulsesPerRev) this.recent.shift();
    this.history.push([this.last, t]);
    if (this.history.length > 2 * this.pulsesPerRev) this.history.shift();
    this.last = t;
  }
}
