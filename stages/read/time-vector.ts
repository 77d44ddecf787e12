// A time vector held as binary numbers beside the samples (an HDF5 time dataset, a MAT-file time vector), read a block at
// a time with them: its steps held against the nominal one, and a step of k ≥ 2 nominal steps read as k − 1 samples the
// logger lost, placed as missing samples in chunks of the reader's size, as a CSV time column's lost rows are.
import { lostRowCounter, lostRowsNote, missingSamples, MOST_LOST_ROWS, type TimePlaces } from './lost-rows.js';
import { float32Ulp, keepSteps, stepCounter, type TimeSteps, type VectorRate } from './time-steps.js';

/**
 * The tolerance a step ending at time t is held to: the vector's own, from its first times, plus, for times held as
 * float32, the unit in the last place there (each of the step's two times rounded by at most half of it, IEEE 754 round to
 * nearest), which grows with t: 100 s at 25.6 kHz rounds by 0.2 of a step where the first times round by a thousandth.
 * Taken at |t| + one step, so that it covers the time before too; worked out once a binade, two comparisons a time.
 * `coarse` is told the first time whose tolerance reaches half a step, from where a regular step and one with a sample
 * lost can no longer be told apart.
 */
export function toleranceAt(rate: VectorRate, coarse: (t: number, ulp: number) => void = () => {}): (t: number) => number {
  const own = rate.tolerance, step = Math.abs(rate.step);
  if (!rate.single) return () => own;
  let low = Infinity, high = -Infinity, within = own, told = false;
  return (t) => {
    const a = Math.abs(t) + step;
    if (a >= low && a < high) return within;
    const ulp = float32Ulp(a);
    low = ulp * 2 ** 23; high = 2 * low; within = own + ulp;
    if (!told && within >= step / 2 && Number.isFinite(t)) { told = true; coarse(t, ulp); }
    return within;
  };
}

/** The note a recording carries when its float32 times round by half a step or more (`toleranceAt`). */
export const coarseTimesNote = (t: number, ulp: number, step: number, places: TimePlaces) =>
  `time vector coarse: ${places.holder} holds float32 times, which from ${t} s on round by up to ${(ulp * 1e3).toPrecision(4)} ms, half its step of ${(step * 1e3).toPrecision(4)} ms or more, so samples lost after there cannot be told from its rounding; save the time as double`;

/**
 * The frames a time vector gives, the samples it says were lost counted with those it holds: the count the chunks come to,
 * read from the times alone (for quern check, which reads no samples), by the same counter as `timeVectorReader`'s.
 */
export async function framesOfTimes(rate: VectorRate, blocks: AsyncIterable<ArrayLike<number>>, places: TimePlaces, most = MOST_LOST_ROWS): Promise<number> {
  const lost = lostRowCounter(rate.step, rate.tolerance, 1 / rate.lowest - 1 / rate.highest, most, 0, places);
  const within = toleranceAt(rate);
  let at = 0, frames = 0;
  for await (const times of blocks) {
    for (let i = 0; i < times.length; i++) frames += 1 + lost.before(times[i], '', at + i, within(times[i]));
    at += times.length;
  }
  return frames;
}

/**
 * Reads a time vector's blocks beside their samples. `rate`: its nominal step and the tolerance of its regular steps (no
 * print resolution: the times are stored as they were taken); `places` names the vector, its indices and the file.
 */
export function timeVectorReader(rate: VectorRate, channels: number, chunkFrames: number, places: TimePlaces, most = MOST_LOST_ROWS) {
  // The step counted from the times as held (not the rate as quoted, whose last digits a gap of millions of steps multiplies).
  const step = rate.step, uncertainty = 1 / rate.lowest - 1 / rate.highest;
  const steps = stepCounter(step, rate.tolerance);
  const lost = lostRowCounter(step, rate.tolerance, uncertainty, most, 0, places);
  let coarse: string | null = null;
  const within = toleranceAt(rate, (t, ulp) => { coarse = coarseTimesNote(t, ulp, step, places); });
  // Chunks being filled around gaps, made at the first gap; until then each block goes out as it was read.
  let out: Float64Array[] | null = null, k = 0;
  function* copy(block: Float64Array[], from: number, to: number): Generator<Float64Array[]> {
    while (from < to) {
      const m = Math.min(to - from, chunkFrames - k);
      for (let c = 0; c < channels; c++) out![c].set(block[c].subarray(from, from + m), k);
      k += m; from += m;
      if (k === chunkFrames) { yield out!; k = 0; }
    }
  }
  return {
    /** The chunks that frames `start` to `start + n` (`block`, one array a channel) and their times fill, lost samples in their places. */
    *place(block: Float64Array[], times: ArrayLike<number>, n: number, start: number): Generator<Float64Array[]> {
      let from = 0;
      for (let i = 0; i < n; i++) {
        const tolerance = within(times[i]);
        const m = lost.before(times[i], '', start + i, tolerance);
        steps.add(times[i], m > 0, false, tolerance);
        if (m === 0) continue;
        out ??= Array.from({ length: channels }, () => new Float64Array(chunkFrames));
        yield* copy(block, from, i);
        k = yield* missingSamples(out, k, m);
        from = i;
      }
      // No chunk part-filled: the block goes out as it was read (a short block is the last).
      if (k === 0 && from === 0) { yield n === chunkFrames ? block : block.map((a) => a.subarray(0, n)); return; }
      yield* copy(block, from, n);
    },
    /** The last chunk, part-filled, once every block is placed. */
    *end(): Generator<Float64Array[]> {
      if (out && k > 0) yield out.map((a) => a.subarray(0, k));
    },
    /** Puts the irregular steps and the samples lost on the recording. */
    keep(into: { timeSteps?: TimeSteps; notes: string[] }): void {
      keepSteps(into, steps);
      const found = lost.result();
      if (found.rows > 0) into.notes.push(lostRowsNote(found, places));
      if (coarse) into.notes.push(coarse);
    },
  };
}
