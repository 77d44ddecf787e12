// The steps of a recording's own time values (a CSV time column, a MAT-file time vector) held against their nominal step:
// the ones off by more than the tolerance are counted, and the widest kept, for the notes and the dropout flag.
import { RecordingError } from './recording.js';

export interface TimeSteps { irregular: number; widest_s: number; widest_at_s: number; nominal_s: number }

/** Counts irregular steps as times arrive one by one, in order. */
export function stepCounter(nominal: number, tolerance: number) {
  let previous = NaN, irregular = 0, widest = 0, widestAt = NaN, times = 0;
  return {
    /** `lost`: the step skips rows a logger dropped (`lost-rows.ts`), read as missing samples rather than an irregular step. */
    add(t: number, lost = false): void {
      times++;
      if (Number.isFinite(previous) && !lost) {
        const dt = t - previous;
        if (!(Math.abs(dt - nominal) <= tolerance)) {
          irregular++;
          if (!(Math.abs(dt) <= Math.abs(widest))) { widest = dt; widestAt = t; }
        }
      }
      previous = t;
    },
    /** Steps seen so far: one fewer than the times (a time that is no number still takes its place). */
    get steps() { return Math.max(0, times - 1); },
    result: (): TimeSteps => ({ irregular, widest_s: widest, widest_at_s: widestAt, nominal_s: nominal }),
  };
}

/** The note a recording carries when its time values stepped irregularly. */
export const irregularNote = (s: TimeSteps, steps: number) =>
  `time steps irregular: ${s.irregular} of ${steps} steps differ from the nominal ${(s.nominal_s * 1e3).toPrecision(4)} ms; the widest is ${(s.widest_s * 1e3).toPrecision(4)} ms, ending at t = ${s.widest_at_s} s; samples were taken as evenly spaced`;

/** A nominal step and the rate it gives, with the lowest and highest rates the times allow, given how precisely they are held. */
export interface TimeRate { step: number; rate: number; lowest: number; highest: number }

/**
 * A time vector's nominal step and rate. Steps within 1 % of their median (or within the printed resolution, when coarser)
 * are regular; the rest are dropouts and do not pull it (a median-centred trimmed estimate, common practice). The step is
 * the span of each run of regular steps, summed, over their count: times printed to a fixed resolution step by two values
 * one last digit apart (0.003 and 0.004 s at 300 Hz), and only the ends of a run carry its rounding, not each step.
 * `resolution` is the times' printed resolution (0 where they are held as binary numbers).
 */
export function timeRate(times: ArrayLike<number>, resolution = 0): TimeRate {
  const n = times.length;
  const steps = Float64Array.from({ length: Math.max(0, n - 1) }, (_, i) => times[i + 1] - times[i]);
  const median = medianOf(steps);
  let largest = 0;
  for (let i = 0; i < n; i++) largest = Math.max(largest, Math.abs(times[i]));
  // How far one time may lie from the true one: half the printed resolution, and the rounding of a double (or of a float,
  // where every time fits one) in parsing and subtracting (IEEE 754 unit roundoff, 2^-53 and 2^-24).
  const stored = Array.prototype.every.call(times, (t: number) => Math.fround(t) === t) ? 2 ** -24 : 2 ** -53;
  const rounding = 4 * stored * largest, error = resolution / 2 + rounding;
  const near = Math.max(0.01 * Math.abs(median), resolution) + 2 * rounding;
  let { span, count, runs } = regularRuns(times, steps, (d) => Math.abs(d - median) <= near);
  // Times printed to their step (1 kHz to the millisecond) keep a skipped row's step within the resolution of the median:
  // one nearer two steps than one is rows lost, and leaves the runs (times printed coarser, 0.1 and 0.2 ms at 7 kHz, keep theirs).
  const first = span / count;
  if (count > 0 && first >= resolution * (1 - 1e-9) && steps.some((d) => Math.abs(d - median) <= near && d >= 1.5 * first)) {
    ({ span, count, runs } = regularRuns(times, steps, (d) => Math.abs(d - median) <= near && d < 1.5 * first));
  }
  if (count === 0) return { step: median, rate: 1 / median, lowest: 1 / median, highest: 1 / median };
  // Each run's span is off by at most one time's error at either end.
  const step = span / count, reach = (2 * error * runs) / count;
  const lowest = 1 / (step + reach), highest = step > reach ? 1 / (step - reach) : Infinity;
  // Quoted to no finer than a part in 10^9, beyond any sampling clock's accuracy (crystals hold some 10^-5, common practice):
  // times summed step by step in doubles (t += 0.01) carry more than their last digit's rounding, and read 100 Hz, not 99.999999999999.
  const rate = 1 / step;
  return { step, rate: shortestWithin(rate, Math.min(lowest, rate * (1 - CLOCK_DIGITS)), Math.max(highest, rate * (1 + CLOCK_DIGITS))), lowest, highest };
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
export const startOfTimes = (first: number): Date | null => (first >= POSIX_FROM_S && first < MAX_TIME_S ? new Date(first * 1000) : null);

/** Times read at open for a time vector's nominal step (as a CSV file's first rows are). */
export const TIME_PROBE = 4096;

/** The sample rate a time vector gives, held against a declared one as a CSV file's time column is (0.5 % beyond what the times allow). */
export function rateFromStep(times: TimeRate, declared: number | null, held: string, where: string): number {
  if (declared != null && !(declared >= 0.995 * times.lowest && declared <= 1.005 * times.highest)) throw new RecordingError(`${held} (the time) steps at ${times.rate.toPrecision(6)} Hz but the declaration says ${declared} Hz; correct ${where} or check the file`);
  return declared ?? times.rate;
}

/** A time vector's nominal step from its first times (at most TIME_PROBE of them), refusing one time or times that do not increase. */
export function nominalStep(first: Float64Array, held: string, where: string): TimeRate {
  if (first.length < 2) throw new RecordingError(`${held} (the time) holds one time, from which no sample rate follows; declare the rate`);
  // Milliseconds since 1970 read as seconds would give a rate a thousand times too low.
  if (Math.abs(first[0]) >= MAX_TIME_S) throw new RecordingError(`${held} (the time) starts at ${first[0]}, too large for seconds; the time is read in seconds: if it holds milliseconds since 1970, save seconds, or name no time and declare the rate in ${where}`);
  const times = timeRate(first);
  if (!(times.step > 0) || !Number.isFinite(times.step)) throw new RecordingError(`${held} (the time) does not increase over its first ${first.length} values; check the file or ${where}`);
  return times;
}

/** Puts what a counter found on the recording once its times are read: the steps, and a note when some were irregular. */
export function keepSteps(into: { timeSteps?: TimeSteps; notes: string[] }, counter: ReturnType<typeof stepCounter>): void {
  into.timeSteps = counter.result();
  if (into.timeSteps.irregular > 0) into.notes.push(irregularNote(into.timeSteps, counter.steps));
}
