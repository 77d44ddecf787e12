// Rows a logger dropped from a file with a time column or time vector: a step k ≥ 2 nominal steps long holds k − 1 samples
// that were never written, read as missing samples so that every figure, the missing-sample accounting and the window times
// follow the file's own times. Steps that are no whole number of nominal steps (irregular sampling) are left to the step counter.
import { RecordingError } from './recording.js';

/**
 * The most samples one gap is filled with: 2^24 (16,777,216), 11 minutes at 25.6 kHz, 4.7 hours at 1 kHz. A logger that
 * drops rows loses a buffer (milliseconds to seconds); a jump this long is a logger stopped and started again, or its clock
 * set, within one file, and filling it would cost each channel's stages as much work as that many samples read.
 */
export const MOST_LOST_ROWS = 2 ** 24;

/**
 * The rows lost in a step of dt seconds: k − 1 where dt lies within `tolerance` of k ≥ 2 nominal steps and not within it
 * of one, else 0. The
 * tolerance is the one a regular step is held to (a time's jitter and printing do not grow with k); `uncertainty`, how far
 * the nominal step itself may be off, is counted k times, since its error adds up over the k steps.
 */
export function rowsLostIn(dt: number, nominal: number, tolerance: number, uncertainty = 0): number {
  // A regular step comes first: times printed under two units a step (800 Hz to the millisecond) step by one and two units.
  if (Math.abs(dt - nominal) <= tolerance) return 0;
  const k = Math.round(dt / nominal);
  return k >= 2 && Math.abs(dt - k * nominal) <= tolerance + k * uncertainty ? k - 1 : 0;
}

/** What a file's lost rows came to: how many in all, in how many gaps, and the largest gap's rows, times and places (lines, indices). */
export interface LostRows { rows: number; gaps: number; largest: number; from: string; to: string; fromLine: number; toLine: number; nominal_s: number }

/** How the messages name the times: what holds them, a time's place and how it is shown, what a lost one is, and where to split. */
export interface TimePlaces {
  /** "the time column", 'dataset "/t" (the time)'. */
  holder: string;
  /** "line 12", "index 600". */
  place: (at: number) => string;
  /** A time as the messages show it: its printed text, or its value in seconds. */
  shown: (t: number, text: string) => string;
  /** What one lost time is: "rows", "samples". */
  lost: string;
  /** Where to cut the file in two before the place `at`. */
  split: (at: number) => string;
}

/** A CSV time column's places: its lines, its times as printed. */
export const PRINTED_LINES: TimePlaces = { holder: 'the time column', place: (n) => `line ${n}`, shown: (_t, text) => text, lost: 'rows', split: (n) => `split the file before line ${n}` };

/** A time vector's places in file `file`: indices counted from 0, times in seconds as stored. */
export const vectorIndices = (holder: string, file: string): TimePlaces => ({
  holder, place: (i) => `index ${i}`, shown: (t) => `${t} s`, lost: 'samples', split: (i) => `split ${file} before index ${i} (counted from 0)`,
});

/**
 * Counts the rows lost before each time as times arrive one by one, in file order; refuses a gap of more than `most` rows,
 * naming the places and times on both sides.
 */
export function lostRowCounter(nominal: number, tolerance: number, uncertainty = 0, most = MOST_LOST_ROWS, half = 0, places = PRINTED_LINES) {
  let previous = NaN, previousText = '', previousLine = 0;
  // Where the unrounded time of the row before may lie: within `half` (half the printed unit) of its printed time, narrowed
  // by the rows before it on their grid (a set-membership estimate, Schweppe 1968).
  let low = NaN, high = NaN;
  const found: LostRows = { rows: 0, gaps: 0, largest: 0, from: '', to: '', fromLine: 0, toLine: 0, nominal_s: nominal };
  /** Whether k steps on from the row before reach t's printed interval; the overlap, or null. */
  const reach = (t: number, k: number) => {
    const from = Math.max(low + k * (nominal - uncertainty), t - half), to = Math.min(high + k * (nominal + uncertainty), t + half);
    return from <= to ? [from, to] as const : null;
  };
  return {
    /** The rows lost between the time before and `t`, printed `text` on line `line`; `within`: this step's tolerance, where it grows with the time. */
    before(t: number, text: string, line: number, within = tolerance): number {
      let lost = Number.isFinite(previous) ? rowsLostIn(t - previous, nominal, within, uncertainty) : 0;
      // Under two printed units a step, a step's printed length fits more than one count of steps (800 Hz to the
      // millisecond: 2 ms is one step or two): the grid the rows before lie on tells them apart.
      if (half > 0 && Number.isFinite(previous) && nominal < 4 * half) {
        const fits = [lost, lost + 1, lost + 2].filter((k) => k >= 1 && Math.abs(t - previous - k * nominal) <= within + k * uncertainty && reach(t, k));
        if (fits.length === 1) lost = fits[0] - 1;
      }
      const on = Number.isFinite(previous) && half > 0 ? reach(t, lost + 1) : null;
      [low, high] = on ?? [t - half, t + half];
      if (lost > most) {
        const p = places;
        throw new RecordingError(`${p.place(line)}: ${p.holder} jumps from ${p.shown(previous, previousText)} (${p.place(previousLine)}) to ${p.shown(t, text)}, ${lost} ${p.lost} lost at the nominal step of ${(nominal * 1e3).toPrecision(4)} ms, more than the ${most} quern reads as missing samples in one gap: a logger stopped and started again, or its clock set, within one file; ${p.split(line)} and reduce each part as its own recording`);
      }
      if (lost > 0) {
        found.rows += lost;
        found.gaps++;
        if (lost > found.largest) Object.assign(found, { largest: lost, from: places.shown(previous, previousText), to: places.shown(t, text), fromLine: previousLine, toLine: line });
      }
      previous = t; previousText = text; previousLine = line;
      return lost;
    },
    result: (): LostRows => ({ ...found }),
  };
}

/** The note a recording carries when rows were lost from its time column or time vector. */
export const lostRowsNote = (s: LostRows, p = PRINTED_LINES) =>
  `${p.lost} lost: ${p.holder} skips ${s.rows} ${p.lost} at its nominal step of ${(s.nominal_s * 1e3).toPrecision(4)} ms in ${s.gaps} gap${s.gaps === 1 ? '' : 's'}, read as missing samples; the largest, ${s.largest} ${p.lost} (${(s.largest * s.nominal_s).toPrecision(4)} s), lies between ${s.from} (${p.place(s.fromLine)}) and ${s.to} (${p.place(s.toLine)})`;

/**
 * Fills `count` missing samples (NaN) into chunks `out` from frame `at` on, yielding each chunk as it fills, however long
 * the gap; returns the frame the next sample goes to.
 */
export function* missingSamples(out: Float64Array[], at: number, count: number): Generator<Float64Array[], number> {
  const size = out[0].length;
  for (let left = count; left > 0;) {
    const m = Math.min(left, size - at);
    for (const a of out) a.fill(NaN, at, at + m);
    at += m; left -= m;
    if (at === size) { yield out; at = 0; }
  }
  return at;
}
