// Counted cycles gathered into rows of cycles.parquet: by bins of range and mean of the declared widths (each row at its bin's
// centre), or unbinned, one row per distinct (range, mean). Either way the rows never pass `cap`: when they would, the cycles
// are binned (an undeclared width starts from the counted cycles, `startingWidth`) and the widths doubled until they fit, so a
// long noisy recording holds at most `cap` rows whatever its length.

export interface CycleBinning { range_width?: number; mean_width?: number }

export interface CycleRow { range: number; mean: number; count: number }

/** Bins across the largest range when the cap first forces binning: 0.4 % of it, finer than a fatigue tool's usual matrix. */
export const STARTING_BINS = 256;

// Bin edges at whole multiples of the width from zero: index ⌊v / w⌋, centre (index + ½)·w.
const binIndex = (v: number, width: number) => Math.floor(v / width);

/** The starting width once the cap is passed: the largest range over `bins`, rounded up to 1, 2 or 5 × 10^k for readable centres. */
export function startingWidth(largestRange: number, bins = STARTING_BINS): number {
  const raw = largestRange / bins;
  if (!(raw > 0) || !Number.isFinite(raw)) return 1;
  const decade = 10 ** Math.floor(Math.log10(raw));
  for (const step of [1, 2, 5, 10]) if (step * decade >= raw) return step * decade;
  return 10 * decade;
}

// A row's place: per axis the exact value while that axis is unbinned, else its bin index at the axis's current width.
interface Cell { r: number; m: number; count: number }

export class CycleBins {
  private rows = new Map<string, Cell>();
  private rangeWidth: number | undefined;
  private meanWidth: number | undefined;
  private largestRange = 0;
  /** Times the widths were doubled to keep the rows under the cap. */
  doublings = 0;
  /** Whether an undeclared axis was binned to keep the rows under the cap. */
  binnedForCap = false;

  constructor(declared: CycleBinning = {}, readonly cap = 65_536) {
    // Below 16 the doubling could stop short: means either side of zero keep two bins, infinite values their own.
    if (!(cap >= 16)) throw new Error(`the cycle row cap must be at least 16, got ${cap}`);
    this.rangeWidth = declared.range_width;
    this.meanWidth = declared.mean_width;
  }

  add(range: number, mean: number, count: number): void {
    if (range > this.largestRange) this.largestRange = range;
    const r = this.rangeWidth ? binIndex(range, this.rangeWidth) : range;
    const m = this.meanWidth ? binIndex(mean, this.meanWidth) : mean;
    const key = `${r}|${m}`;
    const cell = this.rows.get(key);
    if (cell) { cell.count += count; return; }
    this.rows.set(key, { r, m, count });
    if (this.rows.size > this.cap) this.fit();
  }

  /** Rows held now (never more than the cap). */
  get size(): number { return this.rows.size; }

  /** The widths in use; undefined for an axis still unbinned. */
  widths(): { range: number | undefined; mean: number | undefined } {
    return { range: this.rangeWidth, mean: this.meanWidth };
  }

  /** Whether the rows are coarser than declared (or binned though undeclared) because of the cap. */
  get coarsened(): boolean { return this.binnedForCap || this.doublings > 0; }

  /** Rows by range, largest first, then by mean; binned axes at their bins' centres. */
  sorted(): CycleRow[] {
    const rw = this.rangeWidth, mw = this.meanWidth;
    const out: CycleRow[] = [];
    for (const c of this.rows.values()) out.push({ range: rw ? (c.r + 0.5) * rw : c.r, mean: mw ? (c.m + 0.5) * mw : c.m, count: c.count });
    return out.sort((a, b) => b.range - a.range || a.mean - b.mean);
  }

  // Bins what is still exact, then doubles the widths until the rows fit: bins of width 2w are pairs of bins of width w (index
  // ⌊k/2⌋ = ⌊v/2w⌋), so folding the rows is the same as counting every cycle at the final width directly.
  private fit(): void {
    const r0 = this.rangeWidth, m0 = this.meanWidth;
    if (r0 === undefined || m0 === undefined) {
      const width = r0 ?? m0 ?? startingWidth(this.largestRange);
      this.rangeWidth = r0 ?? width;
      this.meanWidth = m0 ?? width;
      this.binnedForCap = true;
      this.regroup((c) => ({ r: r0 === undefined ? binIndex(c.r, width) : c.r, m: m0 === undefined ? binIndex(c.m, width) : c.m }));
    }
    while (this.rows.size > this.cap) {
      this.rangeWidth! *= 2;
      this.meanWidth! *= 2;
      this.doublings++;
      this.regroup((c) => ({ r: Math.floor(c.r / 2), m: Math.floor(c.m / 2) }));
    }
  }

  private regroup(place: (c: Cell) => { r: number; m: number }): void {
    const next = new Map<string, Cell>();
    for (const c of this.rows.values()) {
      const { r, m } = place(c);
      const key = `${r}|${m}`;
      const cell = next.get(key);
      if (cell) cell.count += c.count;
      else next.set(key, { r, m, count: c.count });
    }
    this.rows = next;
  }
}
