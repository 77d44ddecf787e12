// A time column printed more coarsely than its step, held to a declared rate's grid row by row as the file streams: a row
// lost there leaves no step of its own (rows share a printed time), only the grid, which the rows after it no longer fit.

/**
 * The slope of a coarse time column's rows against the declared grid, in printed units a row: the least-squares slope of
 * u_k − k·step (common practice), so that a clock a little off the declared rate (which the first rows allow) is followed.
 */
export function gridDrift(units: ArrayLike<number>, stepUnits: number): number {
  const n = units.length;
  if (n < 2) return 0;
  const kMean = (n - 1) / 2;
  let eMean = 0;
  for (let k = 0; k < n; k++) eMean += units[k] - k * stepUnits;
  eMean /= n;
  let sxy = 0, sxx = 0;
  for (let k = 0; k < n; k++) { sxy += (k - kMean) * (units[k] - k * stepUnits - eMean); sxx += (k - kMean) ** 2; }
  return sxy / sxx;
}

/** Rows a window of the grid spans: the current block and the one before it. */
export const GRID_BLOCK = 4096;

/**
 * How far the rows of a window may spread about the grid, in printed units: one unit (each row within half a unit of its
 * place) plus a quarter for the clock's wander and the slope's error over the window (our choice). A row lost shifts the
 * rows after it by the step in units; at a step under a quarter unit (8 kHz to the millisecond) one row lost stays unseen.
 */
export const GRID_SPREAD = 1.25;

/**
 * Watches rows (printed times in whole units from the first row) against the grid of `stepUnits` a row plus `drift`: each
 * row's offset from the grid, u − k·(step + drift), must lie with those of the window's other rows within `spread`.
 * Per row: a multiply, a subtraction and four comparisons. A row that leaves the grid starts a new window from itself.
 */
export function gridWatch(stepUnits: number, drift = 0, spread = GRID_SPREAD, block = GRID_BLOCK) {
  const step = stepUnits + drift;
  let k = 0, inBlock = 0, low = Infinity, high = -Infinity, lowBefore = Infinity, highBefore = -Infinity;
  let departures = 0, widest = 0;
  return {
    /** Whether the row `u` leaves the grid the rows before it lie on (and how far, in units, is kept as the widest). */
    off(u: number): boolean {
      const e = u - k++ * step;
      if (e < low) low = e;
      if (e > high) high = e;
      const reach = Math.max(high, highBefore) - Math.min(low, lowBefore);
      if (reach > spread) {
        departures++;
        widest = Math.max(widest, reach - 1);
        low = high = e; lowBefore = Infinity; highBefore = -Infinity; inBlock = 1;
        return true;
      }
      if (++inBlock === block) { lowBefore = low; highBefore = high; low = Infinity; high = -Infinity; inBlock = 0; }
      return false;
    },
    /** How many times rows left the grid, and the widest departure in printed units beyond the one a grid allows. */
    get departures() { return departures; },
    get widest() { return widest; },
  };
}
