// The steps of a recording's own time values (a CSV time column, a MAT-file time vector) held against their nominal step:
// the ones off by more than the tolerance are counted, and the widest kept, for the notes and the dropout flag.
import { RecordingError } from './recording.js';

export interface TimeSteps { irregular: number; widest_s: number; widest_at_s: number; nominal_s: number }

/** Counts irregular steps as times arrive one by one, in order. */
export function stepCounter(nominal: number, tolerance: number) {
  let previous = NaN, irregular = 0, widest = 0, widestAt = NaN, times = 0;
  return {
    add(t: number): void {
      times++;
      if (Number.isFinite(previous)) {
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

/**
 * A time vector's nominal step: the mean of the steps within 1 % of their median (or within the times' printed resolution,
 * when coarser), a trimmed mean (common practice). The median keeps a dropout among the first times from pulling it; the
 * mean over the steps near it lets the rounding of printed times (0.0003906 and 0.0003907 s for 1/2560 s) average out.
 */
export function nominalOf(times: ArrayLike<number>, resolution = 0): number {
  const steps = Float64Array.from({ length: Math.max(0, times.length - 1) }, (_, i) => times[i + 1] - times[i]);
  const sorted = Float64Array.from(steps).sort(), mid = sorted.length >> 1;
  const median = sorted.length % 2 ? sorted[mid] : (sorted[mid - 1] + sorted[mid]) / 2;
  const near = Math.max(0.01 * Math.abs(median), resolution);
  let sum = 0, n = 0;
  for (const dt of steps) if (Math.abs(dt - median) <= near) { sum += dt; n++; }
  return n ? sum / n : median;
}

/** Seconds no time value holds: 10^11 s since 1970 is past the year 5000, where milliseconds since 1970 begin. */
export const MAX_TIME_S = 1e11;

/** Times from here up are POSIX seconds (2001-09-09 on): a clock counting from the capture's start reaches them only after 31 years. */
export const POSIX_FROM_S = 1e9;

/** The start a recording's own first time gives: POSIX seconds from POSIX_FROM_S up; below, the times count from the capture's start. */
export const startOfTimes = (first: number): Date | null => (first >= POSIX_FROM_S && first < MAX_TIME_S ? new Date(first * 1000) : null);

/** Times read at open for a time vector's nominal step (as a CSV file's first rows are). */
export const TIME_PROBE = 4096;

/** The sample rate a time vector's nominal step gives, held against a declared one as a CSV file's time column is (0.5 %). */
export function rateFromStep(step: number, declared: number | null, held: string, where: string): number {
  const derived = 1 / step;
  if (declared != null && Math.abs(derived - declared) > 0.005 * declared) throw new RecordingError(`${held} (the time) steps at ${derived.toPrecision(6)} Hz but the declaration says ${declared} Hz; correct ${where} or check the file`);
  return declared ?? Number(derived.toPrecision(6));
}

/** A time vector's nominal step from its first times (at most TIME_PROBE of them), refusing one time or times that do not increase. */
export function nominalStep(first: Float64Array, held: string, where: string): number {
  if (first.length < 2) throw new RecordingError(`${held} (the time) holds one time, from which no sample rate follows; declare the rate`);
  // Milliseconds since 1970 read as seconds would give a rate a thousand times too low.
  if (Math.abs(first[0]) >= MAX_TIME_S) throw new RecordingError(`${held} (the time) starts at ${first[0]}, too large for seconds; the time is read in seconds: if it holds milliseconds since 1970, save seconds, or name no time and declare the rate in ${where}`);
  const step = nominalOf(first);
  if (!(step > 0) || !Number.isFinite(step)) throw new RecordingError(`${held} (the time) does not increase over its first ${first.length} values; check the file or ${where}`);
  return step;
}

/** Puts what a counter found on the recording once its times are read: the steps, and a note when some were irregular. */
export function keepSteps(into: { timeSteps?: TimeSteps; notes: string[] }, counter: ReturnType<typeof stepCounter>): void {
  into.timeSteps = counter.result();
  if (into.timeSteps.irregular > 0) into.notes.push(irregularNote(into.timeSteps, counter.steps));
}
