// Gaps of missing samples before a filter: the filter is fed the gap held at the last finite value, and every output
// sample within `reach` of a missing input sample (the filter's settling, either side) is blanked to NaN afterwards,
// so the figures taken from the output leave the gap and what the filter made of it out, as they leave out missing samples.

/** Copies x into out with each missing sample (NaN, ±Inf) replaced by the last finite one before it (`hold` before x); returns the new hold. */
export function holdLastFinite(x: Float64Array, out: Float64Array, hold: number): number {
  for (let i = 0; i < x.length; i++) {
    const v = x[i];
    if (v - v === 0) hold = v;
    out[i] = v - v === 0 ? v : hold;
  }
  return hold;
}

/** The stretches around gaps, in sample indices of the recording, waiting for the output that falls in them. */
export class GapShadow {
  // [start, end) pairs in order, merged when they overlap; those passed are dropped from the front.
  private spans: number[] = [];
  private head = 0;
  constructor(private readonly reach: number) {}

  /** Notes the missing samples of x, whose first sample is number n0 of the recording. */
  add(x: Float64Array, n0: number): void {
    for (let i = 0; i < x.length; i++) {
      if (x[i] - x[i] === 0) continue;
      const start = n0 + i - this.reach, end = n0 + i + 1 + this.reach, last = this.spans.length - 2;
      if (last >= 2 * this.head && this.spans[last + 1] >= start) this.spans[last + 1] = end;
      else this.spans.push(start, end);
    }
  }

  /** Sets to NaN the samples of each piece that lie in a shadow (the pieces' first sample is number n0); how many. */
  blank(pieces: readonly Float64Array[], n0: number): number {
    const n1 = n0 + pieces[0].length;
    let blanked = 0;
    while (2 * this.head < this.spans.length && this.spans[2 * this.head + 1] <= n0) this.head++;
    for (let s = 2 * this.head; s < this.spans.length && this.spans[s] < n1; s += 2) {
      const from = Math.max(n0, this.spans[s]) - n0, to = Math.min(n1, this.spans[s + 1]) - n0;
      for (const p of pieces) p.fill(NaN, from, to);
      blanked += to - from;
    }
    if (2 * this.head === this.spans.length && this.head > 0) { this.spans = []; this.head = 0; }
    return blanked;
  }

  /** Whether any shadow is waiting: the plain path needs no look at the output then. */
  get pending(): boolean { return 2 * this.head < this.spans.length; }
}
