// A secondary table's rows (windows.parquet, cycles.parquet…) packed as they are added: one float64 column a value name,
// filled in place in chunks, a null bitmap made only once a chunk holds a null, and the rows' channels as runs. A row
// costs its numbers, not an object, so a long recording's millions of rows stay a few bytes each.

/** Rows of a column's first chunk: a short recording's table stays small. */
export const FIRST_CHUNK_ROWS = 1024;
/**
 * Rows of its largest chunks (4 MB of float64): each chunk doubles up to it, so a table never copies its columns as it
 * grows. Chunks this large are mapped apart by the C library and given back to the system when freed, where chunks of
 * the fused pass's size (512 KB) were kept in the thread's heap after the table had gone.
 */
export const LARGEST_CHUNK_ROWS = 1 << 19;

export type RowValues = Record<string, number | null | undefined>;

export class PackedRows {
  /** The value names, in order of first appearance (a row's own key order). */
  readonly names: string[] = [];
  length = 0;
  /** Channel index and number of rows, in pairs, for each run of consecutive rows of one channel. */
  readonly runs: number[] = [];
  private readonly index = new Map<string, number>();
  /** The first row of each chunk, and of the chunk after the last. */
  private readonly starts: number[] = [0];
  private readonly chunks: Float64Array[][] = [];
  private readonly nulls: (Uint8Array | null)[][] = [];
  /** The chunk rows are added to, and the row there. */
  private k = -1;
  private at = 0;

  constructor(readonly firstChunkRows = FIRST_CHUNK_ROWS, readonly largestChunkRows = LARGEST_CHUNK_ROWS) {}

  /**
   * Packs a stored table: each column whole (one chunk), a value that is not finite read as null, as the JSON of the rest
   * of a stored result reads it (JSON has no NaN or infinity).
   */
  static stored(names: string[], runs: number[], columns: Float64Array[], length = columns[0]?.length ?? 0): PackedRows {
    const p = new PackedRows(Math.max(1, length), Math.max(1, length));
    p.length = length;
    for (const r of runs) p.runs.push(r);
    p.starts.push(length);
    p.k = 0; p.at = length;
    names.forEach((name, c) => {
      p.index.set(name, c);
      p.names.push(name);
      const v = columns[c];
      let bits: Uint8Array | null = null;
      for (let i = 0; i < length; i++) {
        const x = v[i];
        if (x - x === 0) continue;
        bits ??= new Uint8Array((length + 7) >> 3);
        bits[i >> 3] |= 1 << (i & 7);
      }
      p.chunks.push([v]);
      p.nulls.push([bits]);
    });
    return p;
  }

  /** Adds a row of `channel`: each named value into its column; a name the table has not seen yet becomes a column, null before. */
  add(channel: number, row: RowValues): void {
    if (this.k < 0 || this.at === this.starts[this.k + 1] - this.starts[this.k]) this.nextChunk();
    const k = this.k, at = this.at;
    let given = 0;
    for (const name in row) {
      const c = this.index.get(name) ?? this.newColumn(name);
      const v = row[name];
      if (v == null) { this.markNull(c, k, at); continue; }
      this.chunks[c][k][at] = v;
      given++;
    }
    // A column the row does not name is null in it.
    if (given < this.names.length) for (let c = 0; c < this.names.length; c++) if (row[this.names[c]] == null) this.markNull(c, k, at);
    const r = this.runs.length;
    if (r && this.runs[r - 2] === channel) this.runs[r - 1]++; else this.runs.push(channel, 1);
    this.at++;
    this.length++;
  }

  /** The columns of `names`, in that order (made where new, null in the rows before): for `addValues`. */
  columnsOf(names: readonly string[]): number[] {
    return names.map((n) => this.index.get(n) ?? this.newColumn(n));
  }

  /** Adds a row of `channel` from values in the order of `columns` (from `columnsOf`); the table's other columns are null in it. */
  addValues(channel: number, columns: readonly number[], values: ArrayLike<number | null>): void {
    if (this.k < 0 || this.at === this.starts[this.k + 1] - this.starts[this.k]) this.nextChunk();
    const k = this.k, at = this.at;
    for (let j = 0; j < columns.length; j++) {
      const v = values[j];
      if (v == null) this.markNull(columns[j], k, at); else this.chunks[columns[j]][k][at] = v;
    }
    if (columns.length < this.names.length) for (let c = 0; c < this.names.length; c++) if (!columns.includes(c)) this.markNull(c, k, at);
    const r = this.runs.length;
    if (r && this.runs[r - 2] === channel) this.runs[r - 1]++; else this.runs.push(channel, 1);
    this.at++;
    this.length++;
  }

  /** A value, or null. */
  value(column: number, i: number): number | null {
    let k = 0;
    for (let lo = 0, hi = this.starts.length - 2; lo <= hi;) { const m = (lo + hi) >> 1; if (this.starts[m] <= i) { k = m; lo = m + 1; } else hi = m - 1; }
    const at = i - this.starts[k];
    const bits = this.nulls[column][k];
    return bits && bits[at >> 3] & (1 << (at & 7)) ? null : this.chunks[column][k][at];
  }

  /** Row i as an object, its values by name (for tests and small tables; the outputs read the columns). */
  row(i: number): Record<string, number | null> {
    const out: Record<string, number | null> = {};
    for (let c = 0; c < this.names.length; c++) out[this.names[c]] = this.value(c, i);
    return out;
  }

  /** The channel index of every row, run by run: [channel, from, to) for each run. */
  *channelRuns(): Generator<[number, number, number]> {
    let from = 0;
    for (let r = 0; r < this.runs.length; r += 2) { yield [this.runs[r], from, from + this.runs[r + 1]]; from += this.runs[r + 1]; }
  }

  /** A column's values in order as views of its chunks (the last cut to the rows it holds); nulls are NaN there. */
  chunksOf(column: number): Float64Array[] {
    const out: Float64Array[] = [];
    for (let k = 0; k < this.chunks[column].length && this.starts[k] < this.length; k++) {
      const n = Math.min(this.starts[k + 1], this.length) - this.starts[k];
      const chunk = this.chunks[column][k];
      out.push(n === chunk.length ? chunk : chunk.subarray(0, n));
    }
    return out;
  }

  /** A column whole: a view when it lies in one chunk, else a copy. Nulls are NaN there. */
  column(column: number): Float64Array {
    const parts = this.chunksOf(column);
    if (parts.length === 1) return parts[0];
    const out = new Float64Array(this.length);
    let at = 0;
    for (const p of parts) { out.set(p, at); at += p.length; }
    return out;
  }

  /** Whether any value of the column is null. */
  hasNulls(column: number): boolean {
    return this.nulls[column].some((b) => b !== null);
  }

  /** A chunk for every column, twice the last one's rows up to the largest. */
  private nextChunk(): void {
    const size = this.k < 0 ? this.firstChunkRows : Math.min(this.largestChunkRows, 2 * (this.starts[this.k + 1] - this.starts[this.k]));
    this.k++;
    this.at = 0;
    this.starts.push(this.starts[this.k] + size);
    for (let c = 0; c < this.names.length; c++) this.newChunk(c, this.k);
  }

  private newChunk(c: number, k: number): void {
    this.chunks[c].push(new Float64Array(this.starts[k + 1] - this.starts[k]));
    this.nulls[c].push(null);
  }

  private newColumn(name: string): number {
    const c = this.names.length;
    this.names.push(name);
    this.index.set(name, c);
    this.chunks.push([]);
    this.nulls.push([]);
    // Every row before this one lacks the value: null.
    for (let k = 0; k <= this.k; k++) {
      this.newChunk(c, k);
      for (let at = 0, n = Math.min(this.starts[k + 1], this.length) - this.starts[k]; at < n; at++) this.markNull(c, k, at);
    }
    return c;
  }

  private markNull(c: number, k: number, at: number): void {
    this.chunks[c][k][at] = NaN;
    const bits = (this.nulls[c][k] ??= new Uint8Array((this.chunks[c][k].length + 7) >> 3));
    bits[at >> 3] |= 1 << (at & 7);
  }
}
