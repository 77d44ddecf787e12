// Whether floating-point samples lie on a declared converter's steps: a logger's float export of its codes keeps them, a
// filtered or resampled one does not.

/**
 * What a floating-point channel declares of its converter (bits and range): one step, its code width range span / 2^bits
 * (IEEE Std 1241, common practice), in engineering units; the offset the stored values were shifted by on the way there;
 * and the storage's unit roundoff (relative rounding of one stored value).
 */
export interface DeclaredGrid { step: number; offset: number; roundoff: number }

/** Unit roundoff of a stored value (IEEE 754 binary16, 32, 64: 2^-11, 2^-24, 2^-53); decimal text as float64 (its digits are the data). */
export const storageRoundoff = (encoding: string) => (/float16/.test(encoding) ? 2 ** -11 : /float32/.test(encoding) ? 2 ** -24 : 2 ** -53);

/**
 * The declared converter's grid for floating-point samples (IEEE Std 1241 code width: range span / 2^bits), or null without
 * both bits and a range of positive span; `normalised` (integer codes) keeps the file's own step, so it gives null too.
 */
export function declaredGrid(normalised: boolean, bits: number | null, range: [number, number] | null, offset: number, encoding: string): DeclaredGrid | null {
  if (normalised || !bits || !range) return null;
  const step = (range[1] - range[0]) / 2 ** bits;
  return step > 0 && Number.isFinite(step) ? { step, offset, roundoff: storageRoundoff(encoding) } : null;
}

/** Share of a step within which a change counts as a whole number of steps: decimal text printed to fewer digits than a double holds (our choice). */
export const GRID_SLACK = 0.01;

/** Above this share of a step, a change's rounding in storage could hide which whole number of steps it is: it tells nothing. */
const TELLS_NOTHING = 0.25;

/** What the changes between successive samples said of the declared grid so far. */
export interface GridTally {
  /** Greatest common divisor of the changes on the grid, in steps (0 before any). */
  grid: number;
  /** Changes that could tell (rounding under a quarter step), and of those, how many lie off every whole number of steps. */
  told: number;
  off: number;
  /** The first change off the grid: the sample it ends on (index in the recording), and its distance from the nearest whole step, in steps. */
  firstOffAt: number;
  firstOffBy: number;
}

export const noTally = (): GridTally => ({ grid: 0, told: 0, off: 0, firstOffAt: -1, firstOffBy: 0 });

/** Greatest common divisor of two whole numbers (Euclid's algorithm). */
export const gcd = (a: number, b: number) => { while (b) [a, b] = [b, a % b]; return a; };

/**
 * Folds the changes between successive samples of x[0..count) into `tally` (x[0] being sample `n0` of the recording, `prev`
 * the one before it). A change is on the grid when it lies within GRID_SLACK of a step, or within the storage's rounding of
 * both samples (roundoff × |stored value|, Higham, Accuracy and Stability of Numerical Algorithms, 2.1), of a whole number
 * of steps; a change smaller than that is no change, and one whose rounding could reach a quarter step is passed over.
 */
export function foldGrid(tally: GridTally, x: Float64Array, g: DeclaredGrid, n0 = 0, count = x.length, prev = NaN): GridTally {
  let { grid, told, off, firstOffAt, firstOffBy } = tally;
  const { step, offset, roundoff } = g;
  for (let i = 0; i < count; i++) {
    const v = x[i], d = Math.abs(v - prev) / step;
    const tol = Math.max(GRID_SLACK, roundoff * (Math.abs(prev - offset) + Math.abs(v - offset)) / step);
    prev = v;
    if (!(d > tol) || !(d < Infinity) || tol >= TELLS_NOTHING) continue; // no change, a missing sample, or rounding too coarse to tell
    const k = Math.round(d), by = Math.abs(d - k);
    told++;
    if (by > tol) {
      if (off++ === 0) { firstOffAt = n0 + i; firstOffBy = by; }
    } else grid = gcd(k, grid);
  }
  return { grid, told, off, firstOffAt, firstOffBy };
}
