// Windows at a floor: a channel's back-to-back windows whose level (RMS about the window's mean) falls below a floor,
// counted, with the stretches they make (the first and the longest, so a fault's stretch is named beside a rest's); those held at one value or at a rail are counted apart, since the flatline,
// saturation and dropout flags name them (a stuck converter, a clipped input, zeros) and a floor would misname them.

export interface QuietTally {
  /** Windows with a finite sample. */
  all: number;
  /** Windows at the floor, not held. */
  quiet: number;
  /** Windows below the floor that hold one value, or sit at a rail. */
  held: number;
  /** Index of the first quiet window's first sample, -1 when none. */
  firstQuietStart: number;
  /** Stretches of back-to-back quiet windows (a window above the floor, held, or of missing samples only ends one). */
  stretches: number;
  /** Sample index past the first stretch's end, -1 when none. */
  firstStretchEnd: number;
  /** The longest stretch's first sample and the index past its end (the earliest of equals), -1 when none. */
  longestStart: number;
  longestEnd: number;
  /** The current stretch's first sample and the index past its last quiet window, -1 when none. */
  stretchStart: number;
  stretchEnd: number;
  /** Sum of squares about each window's mean, and finite samples, of the windows above the floor. */
  livePower: number;
  liveSamples: number;
}

export const noQuiet = (): QuietTally => ({
  all: 0, quiet: 0, held: 0, firstQuietStart: -1, stretches: 0, firstStretchEnd: -1, longestStart: -1, longestEnd: -1, stretchStart: -1, stretchEnd: -1, livePower: 0, liveSamples: 0,
});

/** Adds the quiet window [start, end) to the stretch it continues, or starts a new one; keeps the first and the longest. */
export function extendStretch(t: QuietTally, start: number, end: number): void {
  if (t.stretchEnd !== start) { t.stretches++; t.stretchStart = start; }
  t.stretchEnd = end;
  if (t.stretches === 1) t.firstStretchEnd = end;
  if (t.longestStart < 0 || end - t.stretchStart > t.longestEnd - t.longestStart) { t.longestStart = t.stretchStart; t.longestEnd = end; }
}

/**
 * Whether a window below the floor holds one value: its largest magnitude equals its mean's, to within a quarter of a
 * converter step spread over the window (one sample a step off moves the mean by step/finite; the sum's rounding is far
 * less), or to 1e-12 of the peak without a step. A window of zeros holds one value too.
 */
export function holdsOneValue(sum: number, peak: number, finite: number, step: number | null): boolean {
  const tolerance = step != null ? step / (4 * finite) : 1e-12 * peak;
  return peak - Math.abs(sum / finite) <= tolerance;
}

/** Whether a window below a floor of RMS `floorRms` sits at a rail: its mean within that of a saturation limit, or past it. */
export const atRail = (mean: number, floorRms: number, limits: readonly [number, number] | null) =>
  limits != null && (mean >= limits[1] - floorRms || mean <= limits[0] + floorRms);

/**
 * Folds one window into `t`: its level about its mean (mean square sumSquares/finite − mean², from the pass's sums) below `floorRms` makes it quiet, or held where it holds one value or sits at a rail.
 */
export function tallyWindow(
  t: QuietTally, sum: number, sumSquares: number, peak: number, end: number, finite: number, length: number,
  floorRms: number, step: number | null = null, limits: readonly [number, number] | null = null,
): void {
  if (finite === 0) return; // a window of missing samples only: the dropout flag's
  const mean = sum / finite, meanSquare = Math.max(0, sumSquares / finite - mean * mean);
  t.all++;
  if (meanSquare >= floorRms * floorRms) { t.livePower += meanSquare * finite; t.liveSamples += finite; return; }
  if (holdsOneValue(sum, peak, finite, step) || atRail(mean, floorRms, limits)) { t.held++; return; }
  if (t.quiet === 0) t.firstQuietStart = end - length;
  t.quiet++;
  extendStretch(t, end - length, end);
}

/** RMS about their own means of the windows above the floor (0 when none). */
export const liveRms = (t: QuietTally) => (t.liveSamples > 0 ? Math.sqrt(t.livePower / t.liveSamples) : 0);

/**
 * How far RMS and band levels read below the live part's where a share `s` of the recording carries nothing (a dead
 * stretch): the mean square is (1 − s) of the live part's, so RMS reads 1 − √(1 − s) low (derived; 29.3 % for half).
 */
export const deadShareShortfall = (s: number) => 1 - Math.sqrt(1 - Math.min(1, Math.max(0, s)));
