// The steps of a recording's own time values (a CSV time column, a MAT-file time vector) held against their nominal step:
// the ones off by more than the tolerance are counted, and the widest kept, for the notes and the dropout flag.
import { RecordingError } from './recording.js';
import { startAt } from './iso-time.js';

/** `unmeasured`: the irregular steps to a time that is no number, which have no width. */
export interface TimeSteps { irregular: number; unmeasured?: number; widest_s: number; widest_at_s: number; nominal_s: number }

/** The widest irregular step and the nominal in words, or the times that are no number where no step was measured. */
export const widestStep = (s: TimeSteps, seconds: (x: number) => string) => {
  const none = s.unmeasured ? `${s.unmeasured} time${s.unmeasured === 1 ? ' is' : 's are'} no number` : '';
  return Number.isFinite(s.widest_at_s)
    ? `the widest ${seconds(s.widest_s)} (nominal ${seconds(s.nominal_s)}) ending at t = ${seconds(s.widest_at_s)}${none ? `; ${none}` : ''}`
    : `${none} (nominal ${seconds(s.nominal_s)})`;
};

/** Counts irregular steps as times arrive one by one, in order. */
export function stepCounter(nominal: number, tolerance: number) {
  let previous = NaN, irregular = 0, unmeasured = 0, widest = 0, widestAt = NaN, times = 0;
  return {
    /**
     * `lost`: the step skips rows a logger dropped (`lost-rows.ts`), read as missing samples rather than an irregular step;
     * `off`: the time leaves a declared grid (`grid-watch.ts`), an irregular step whatever its length; `within`: the
     * tolerance of this step, where it grows with the time (`toleranceAt` in `time-vector.ts`).
     */
    add(t: number, lost = false, off = false, within = tolerance): void {
      times++;
      // A time that is no number (NaN in a time vector) is a step that cannot be measured: counted, never the widest.
      if (!Number.isFinite(t)) { if (times > 1) { irregular++; unmeasured++; } previous = NaN; return; }
      if (Number.isFinite(previous) && !lost) {
        const dt = t - previous;
        if (!(Math.abs(dt - nominal) <= within) || off) {
          irregular++;
          if (!(Math.abs(dt) <= Math.abs(widest))) { widest = dt; widestAt = t; }
        }
      }
      previous = t;
    },
    /** Steps seen so far: one fewer than the times (a time that is no number still takes its place). */
    get steps() { return Math.max(0, times - 1); },
    result: (): TimeSteps => ({ irregular, unmeasured, widest_s: widest, widest_at_s: widestAt, nominal_s: nominal }),
  };
}

/** The note a recording carries when its time values stepped irregularly. */
export const irregularNote = (s: TimeSteps, steps: number) =>
  `time steps irregular: ${s.irregular} of ${steps} steps differ from the nominal ${(s.nominal_s * 1e3).toPrecision(4)} ms; ${Number.isFinite(s.widest_at_s) ? `the widest is ${(s.widest_s * 1e3).toPrecision(4)} ms, ending at t = ${s.widest_at_s} s${s.unmeasured ? `, and ${s.unmeasured} times are no number` : ''}` : `${s.unmeasured} times are no number`}; samples were taken as evenly spaced`;

/** A nominal step and the rate it gives, with the lowest and highest rates the times allow, given how precisely they are held. */
export interface TimeRate { step: number; rate: number; lowest: number; highest: number }

/**
 * A time vector's nominal step and rate. Steps within 1 % of their median (or within the printed resolution, when coarser)
 * are regular; the rest are dropouts and do not pull it (a median-centred trimmed estimate, common practice). The step is
 * the span of each run of regular steps, summed, over their count: times printed to a fixed resolution step by two values
 * one last digit apart (0.003 and 0.004 s at 300 Hz), and only the ends of a run carry its rounding, not each step.
 * `resolution` is the times' printed resolution (0 where they are held as binary numbers): printed times are counted in
 * whole units of it (`printedRate`).
 */
export function timeRate(times: ArrayLike<number>, resolution = 0): TimeRate {
  const n = times.length;
  if (resolution > 0 && n > 0) return printedRate(Float64Array.from({ length: n }, (_, i) => Math.round((times[i] - times[0]) / resolution)), resolution);
  const steps = Float64Array.from({ length: Math.max(0, n - 1) }, (_, i) => times[i + 1] - times[i]);
  const median = medianOf(steps);
  const rounding = roundingOf(times);
  const near = regularTolerance(median, rounding);
  const { span, count, runs } = regularRuns(times, steps, (d) => Math.abs(d - median) <= near);
  if (count === 0) return { step: median, rate: 1 / median, lowest: 1 / median, highest: 1 / median };
  // Each run's span is off by at most one time's error at either end.
  return quoted(span / count, (2 * rounding * runs) / count);
}

/**
 * How far one time held as a binary number may lie from the true one: the rounding of a double (or of a float, where every
 * time fits one) in parsing and subtracting, at the largest time (IEEE 754 unit roundoff, 2^-53 and 2^-24).
 */
export function roundingOf(times: ArrayLike<number>): number {
  let largest = 0;
  for (let i = 0; i < times.length; i++) largest = Math.max(largest, Math.abs(times[i]));
  const stored = Array.prototype.every.call(times, (t: number) => Math.fround(t) === t) ? 2 ** -24 : 2 ** -53;
  return 4 * stored * largest;
}

/**
 * Float32's unit in the last place at |t|: 2^(e − 23) in the binade [2^e, 2^(e+1)) (IEEE 754 binary32, a 24-bit
 * significand), the least subnormal's below 2^−126.
 */
export function float32Ulp(t: number): number {
  const a = Math.abs(t);
  if (!(a >= 2 ** -126)) return 2 ** -149;
  let e = Math.floor(Math.log2(a));
  // Math.log2 may round across a power of two: the binade is held against the powers themselves.
  if (2 ** e > a) e--; else if (2 ** (e + 1) <= a) e++;
  return 2 ** (e - 23);
}

/** How far a step between two binary times may lie from the nominal and still be regular: 1 % of it (a clock's jitter), plus both times' rounding. */
export const regularTolerance = (step: number, rounding: number) => 0.01 * Math.abs(step) + 2 * rounding;

/** A rate from times printed to a fixed resolution, and whether they are printed more coarsely than they step (times repeat). */
export interface PrintedRate extends TimeRate { coarse: boolean }

/**
 * The nominal step of times printed to a fixed resolution, given as whole units of it from the first time (exact integers,
 * `printed-time.ts`), and `unit` seconds a unit. A regular step rounded to the resolution prints as the whole units just
 * below or above it, and a time on a tie of rounding one unit either way, so steps within one unit of the nominal (or 1 %
 * of it, where that is more) are regular; the step is the span of their runs over their count (a trimmed mean, common
 * practice), exact to one unit at each run's ends. A step under one unit (several rows share a printed time) is `coarse`.
 */
export function printedRate(units: ArrayLike<number>, unit: number): PrintedRate {
  const n = units.length;
  const steps = Float64Array.from({ length: Math.max(0, n - 1) }, (_, i) => units[i + 1] - units[i]);
  const median = medianOf(steps);
  const within = (q: number) => (d: number) => Math.abs(d - q) <= Math.max(1, 0.01 * q);
  let { span, count } = regularRuns(units, steps, within(median));
  if (count === 0) return { ...quoted(median * unit, 0), coarse: median < 1 };
  let q = span / count;
  // Rows lost among steps of one unit (1 kHz to the millisecond) make steps of two, which the first pass kept; a step
  // between one and two units (800 Hz to the millisecond) prints as one and two units in turn, the longer ones the step's
  // fraction above one unit of all steps. Fewer than 1 % longer steps, out of step with a steady clock, are rows lost.
  const longer = steps.filter((d) => within(median)(d) && d >= 1.5 * q).length;
  // A steady clock within 1 % below one unit a step (995 Hz to the millisecond) steps two units too, but evenly: its rows
  // lie on one grid. Rows lost at random places leave it; one longer step fits any grid, and stays a row lost.
  const steady = longer >= 2 && onOneGrid(units, steps, within(median));
  // Such a clock with a row lost among its rows (995 Hz to the millisecond, one row lost) lies on one grid once it is put back.
  const spanned = !steady && q >= 1 && longer >= 2 && longer < 0.01 * count ? stepsWithLostRows(units, steps, within(median), q) : 0;
  if (spanned > 0) return { ...quoted(((units[n - 1] - units[0]) * unit) / spanned, unit / spanned), coarse: false };
  const lost = q >= 1 && longer > 0 && longer < 0.01 * count && !steady;
  if (lost) ({ span, count } = regularRuns(units, steps, (d) => within(median)(d) && d < 1.5 * q));
  q = span / count;
  // Held again about the step itself: within one unit of it, the rows lost left out.
  const again = regularRuns(units, steps, (d) => within(q)(d) && !(lost && d >= 1.5 * q));
  if (again.count > 0) q = again.span / again.count;
  const runs = again.count > 0 ? again.runs : 1, kept = again.count > 0 ? again.count : count;
  // Each run's ends are off by at most half a unit each.
  return { ...quoted(q * unit, (runs * unit) / kept), coarse: q < 1 };
}

/**
 * Whether the rows of every run of regular steps lie on one grid: each within half a unit of a common straight line of its
 * run (a steady clock's times rounded to the print, a Sturmian sequence), the slope pooled over the runs by least squares.
 * Spread over 1 unit (plus 1/20 for the slope's own error, our choice) is a row out of place.
 */
export function onOneGrid(units: ArrayLike<number>, steps: Float64Array, regular: (step: number) => boolean, spread = 1.05): boolean {
  const runs: [number, number][] = [];
  for (let i = 0, from = -1; i <= steps.length; i++) {
    const kept = i < steps.length && regular(steps[i]);
    if (kept && from < 0) from = i;
    if (!kept && from >= 0) { runs.push([from, i]); from = -1; }
  }
  // Least-squares slope of units against row, each run about its own means (common practice: a pooled within-group slope).
  let sxy = 0, sxx = 0;
  for (const [a, b] of runs) {
    const kMean = (a + b) / 2;
    let uMean = 0;
    for (let k = a; k <= b; k++) uMean += units[k];
    uMean /= b - a + 1;
    for (let k = a; k <= b; k++) { sxy += (k - kMean) * (units[k] - uMean); sxx += (k - kMean) ** 2; }
  }
  if (!(sxx > 0)) return false;
  // The slope least squares gives, then the one that narrows the widest run's spread the most (a few carries of a unit
  // over many rows pull the least-squares slope off a grid that holds them).
  const widest = (slope: number) => runs.reduce((most, [a, b]) => {
    let low = Infinity, high = -Infinity;
    for (let k = a; k <= b; k++) { const e = units[k] - k * slope; if (e < low) low = e; if (e > high) high = e; }
    return Math.max(most, high - low);
  }, 0);
  const longest = runs.reduce((most, [a, b]) => Math.max(most, b - a), 1);
  return leastSpread(widest, sxy / sxx, 2 / longest) <= spread;
}

/**
 * The least spread of `spreadAt` over slopes within `reach` of `near`: a row's offset from a line is linear in its slope, so
 * the spread (the largest offset less the smallest) is convex in it, and a ternary search finds its least (a minimax,
 * Chebyshev, fit of one slope; common practice).
 */
export function leastSpread(spreadAt: (slope: number) => number, near: number, reach: number, rounds = 48): number {
  let low = near - reach, high = near + reach;
  for (let i = 0; i < rounds; i++) {
    const a = low + (high - low) / 3, b = high - (high - low) / 3;
    if (spreadAt(a) <= spreadAt(b)) high = b; else low = a;
  }
  return spreadAt((low + high) / 2);
}

/** The spread of printed units about a line against their rows' sample indices, at `slope`. */
function spreadAt(units: ArrayLike<number>, index: Float64Array, slope: number): number {
  let low = Infinity, high = -Infinity;
  for (let k = 0; k < units.length; k++) { const e = units[k] - index[k] * slope; if (e < low) low = e; if (e > high) high = e; }
  return high - low;
}

/**
 * The steps a steady clock's rows span once a few rows lost among them are put back, or 0 where none fit: `q` units a step
 * about. A step `regular` does not keep is a gap of its length over `q` steps; its longer regular steps (1.5 `q` and more)
 * are the clock's carries of a printed unit, or rows lost: a row lost moves the rows after it one step along.
 * Greedy least squares (common practice): the longer step whose row, put back, leaves the least squared error about one
 * line, until the rows lie within `spread` of one line (as `onOneGrid`). At most a quarter as many rows lost as carries,
 * and at least four carries (our choice): a few longer steps fit some grid wherever they fall, so fewer are rows lost
 * from a clock at the printed unit.
 */
export function stepsWithLostRows(units: ArrayLike<number>, steps: Float64Array, regular: (step: number) => boolean, q: number, spread = 1.05): number {
  const n = units.length;
  const candidates: number[] = [];
  steps.forEach((d, i) => { if (regular(d) && d >= 1.5 * q) candidates.push(i); });
  const most = Math.floor(candidates.length / 5);
  if (most < 1) return 0;
  const index = new Float64Array(n);
  for (let k = 1; k < n; k++) index[k] = index[k - 1] + (regular(steps[k - 1]) ? 1 : Math.max(1, Math.round(steps[k - 1] / q)));
  const fits = () => leastSpread((b) => spreadAt(units, index, b), (units[n - 1] - units[0]) / (index[n - 1] - index[0]), 2 / n) <= spread;
  // Sums after each row (of indices and units), so that each candidate's squared error about its least-squares line is a few operations.
  const mAfter = new Float64Array(n + 1), uAfter = new Float64Array(n + 1);
  let su = 0, suu = 0;
  for (let k = 0; k < n; k++) { su += units[k]; suu += units[k] * units[k]; }
  for (let lost = 0; lost < most; lost++) {
    if (fits()) return index[n - 1] - index[0];
    let sm = 0, smm = 0, smu = 0;
    for (let k = n - 1; k >= 0; k--) {
      mAfter[k] = mAfter[k + 1] + index[k]; uAfter[k] = uAfter[k + 1] + units[k];
      sm += index[k]; smm += index[k] * index[k]; smu += index[k] * units[k];
    }
    let best = -1, leastError = Infinity;
    for (const at of candidates) {
      if (index[at + 1] - index[at] > 1) continue;
      // Every row after `at` one index on: the sums moved, then the squared error of the least-squares line.
      const c = n - at - 1, m = sm + c, mm = smm + 2 * mAfter[at + 1] + c, mu = smu + uAfter[at + 1];
      const sxx = mm - (m * m) / n, sxy = mu - (m * su) / n, error = suu - (su * su) / n - (sxy * sxy) / sxx;
      if (error < leastError) { best = at; leastError = error; }
    }
    if (best < 0) return 0;
    for (let k = best + 1; k < n; k++) index[k] += 1;
  }
  return fits() ? index[n - 1] - index[0] : 0;
}

/** A step and how far it may be off, as a rate quoted to the digits they support. */
function quoted(step: number, reach: number): TimeRate {
  const lowest = 1 / (step + reach), highest = step > reach ? 1 / (step - reach) : Infinity;
  // Quoted to no finer than a part in 10^9, beyond any sampling clock's accuracy (crystals hold some 10^-5, common practice):
  // times summed step by step in doubles (t += 0.01) carry more than their last digit's rounding, and read 100 Hz, not 99.999999999999.
  const rate = 1 / step;
  return { step, rate: shortestWithin(rate, Math.min(lowest, rate * (1 - CLOCK_DIGITS)), Math.max(highest, rate * (1 + CLOCK_DIGITS))), lowest, highest };
}

/**
 * Whether times printed to a fixed resolution (units from the first, as `printedRate` takes them) lie on the grid of a
 * declared step: each within half a unit of start + k steps for the k-th row, whatever the start, so the spread of
 * u_k − k·step spans at most one unit (and the 0.5 % a declared rate is allowed, over the span). Returns the row that
 * leaves the grid first, or −1.
 */
export function offGrid(units: ArrayLike<number>, stepUnits: number, slack = 0.005): number {
  let low = Infinity, high = -Infinity;
  const span = units.length ? units[units.length - 1] - units[0] : 0;
  for (let k = 0; k < units.length; k++) {
    const e = units[k] - k * stepUnits;
    low = Math.min(low, e); high = Math.max(high, e);
    if (high - low > 1 + slack * Math.abs(span) + 1e-9) return k;
  }
  return -1;
}

/** The runs of steps `regular` keeps: their spans summed, their steps counted, and how many runs. */
function regularRuns(times: ArrayLike<number>, steps: Float64Array, regular: (step: number) => boolean) {
  let span = 0, count = 0, runs = 0, from = -1;
  for (let i = 0; i <= steps.length; i++) {
    const kept = i < steps.length && regular(steps[i]);
    if (kept && from < 0) from = i;
    if (!kept && from >= 0) { span += times[i] - times[from]; count += i - from; runs++; from = -1; }
  }
  return { span, count, runs };
}

/** The finest relative difference a rate from times is quoted to. */
export const CLOCK_DIGITS = 1e-9;

/** A time vector's nominal step (`timeRate`'s). */
export const nominalOf = (times: ArrayLike<number>, resolution = 0): number => timeRate(times, resolution).step;

// Median of a sorted copy (common practice).
function medianOf(values: Float64Array): number {
  const sorted = Float64Array.from(values).sort(), mid = sorted.length >> 1;
  return sorted.length % 2 ? sorted[mid] : (sorted[mid - 1] + sorted[mid]) / 2;
}

/**
 * The decimal of fewest significant digits between low and high, starting from x: a measured rate quoted to the digits its
 * times support and no more (JCGM 100:2008, GUM 7.2.6), so that 300 Hz printed to the millisecond reads 300 Hz; times held
 * in doubles keep all their digits.
 */
export function shortestWithin(x: number, low: number, high: number): number {
  if (!Number.isFinite(x)) return x;
  for (let digits = 1; digits <= 17; digits++) {
    const d = Number(x.toPrecision(digits));
    if (d >= low && d <= high) return d;
  }
  return x;
}

/** Seconds no time value holds: 10^11 s since 1970 is past the year 5000, where milliseconds since 1970 begin. */
export const MAX_TIME_S = 1e11;

/** Times from here up are POSIX seconds (2001-09-09 on): a clock counting from the capture's start reaches them only after 31 years. */
export const POSIX_FROM_S = 1e9;

/** The start a recording's own first time gives: POSIX seconds from POSIX_FROM_S up; below, the times count from the capture's start. */
export const startOfTimes = (first: number): Date | null => (first >= POSIX_FROM_S && first < MAX_TIME_S ? startAt(first * 1000) : null);

/** Times read at open for a time vector's nominal step (as a CSV file's first rows are). */
export const TIME_PROBE = 4096;

/** The sample rate a time vector gives, held against a declared one as a CSV file's time column is (0.5 % beyond what the times allow). */
export function rateFromStep(times: TimeRate, declared: number | null, held: string, where: string): number {
  if (declared != null && !(declared >= 0.995 * times.lowest && declared <= 1.005 * times.highest)) throw new RecordingError(`${held} (the time) steps at ${times.rate.toPrecision(6)} Hz but the declaration says ${declared} Hz; correct ${where} or check the file`);
  return declared ?? times.rate;
}

/**
 * A time vector's nominal step and rate, and the tolerance its regular steps are held to (`regularTolerance`, from its first
 * times); `single`: every time probed fits a float32, whose rounding grows with the time (`toleranceAt` in `time-vector.ts`).
 */
export interface VectorRate extends TimeRate { tolerance: number; single: boolean }

/** A time vector's nominal step from its first times (at most TIME_PROBE of them), refusing one time or times that do not increase. */
export function nominalStep(first: Float64Array, held: string, where: string): VectorRate {
  if (first.length < 2) throw new RecordingError(`${held} (the time) holds one time, from which no sample rate follows; declare the rate`);
  // Milliseconds since 1970 read as seconds would give a rate a thousand times too low.
  if (Math.abs(first[0]) >= MAX_TIME_S) throw new RecordingError(`${held} (the time) starts at ${first[0]}, too large for seconds; the time is read in seconds: if it holds milliseconds since 1970, save seconds, or name no time and declare the rate in ${where}`);
  const times = timeRate(first);
  if (!(times.step > 0) || !Number.isFinite(times.step)) throw new RecordingError(`${held} (the time) does not increase over its first ${first.length} values; check the file or ${where}`);
  return { ...times, tolerance: regularTolerance(times.step, roundingOf(first)), single: first.every((t) => Math.fround(t) === t) };
}

/** Puts what a counter found on the recording once its times are read: the steps, and a note when some were irregular. */
export function keepSteps(into: { timeSteps?: TimeSteps; notes: string[] }, counter: ReturnType<typeof stepCounter>): void {
  into.timeSteps = counter.result();
  if (into.timeSteps.irregular > 0) into.notes.push(irregularNote(into.timeSteps, counter.steps));
}
