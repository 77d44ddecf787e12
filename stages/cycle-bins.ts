// Counted cycles gathered into rows of cycles.parquet: by bins of range and mean of the declared widths (each row at its bin's
// centre), or unbinned, one row per distinct (range, mean). Binned, memory is bounded by the bins occupied; unbinned, a long
// noisy recording can bring many distinct rows: declare bins for long recordings.

export interface CycleBinning { range_width?: number; mean_width?: number }

export interface CycleRow { range: number; mean: number; count: number }

const binned = (v: number, width: number | undefined) => (width ? (Math.floor(v / width) + 0.5) * width : v);

export class CycleBins {
  private readonly rows = new Map<string, CycleRow>();

  constructor(private readonly bins: CycleBinning = {}) {}

  add(range: number, mean: number, count: number): void {
    const r = binned(range, this.bins.range_width), m = binned(mean, this.bins.mean_width);
    const key = `${r}|${m}`;
    const row = this.rows.get(key);
    if (row) row.count += count;
    else this.rows.set(key, { range: r, mean: m, count });
  }

  /** Rows by range, largest first, then by mean. */
  sorted(): CycleRow[] {
    return [...this.rows.values()].sort((a, b) => b.range - a.range || a.mean - b.mean);
  }
}
