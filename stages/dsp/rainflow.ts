// Rainflow counting of ASTM E1049-85 (reapproved 2017) §5.4.4, streaming: turning points arrive one at a time; X is the most
// recent range and Y the one before it. While X ≥ Y: Y is one cycle (its two points discarded), or, when Y holds the starting
// point S, one half cycle (S discarded, the start moving to Y's second point). At the end every range left (the residue) is a
// half cycle. The stack holds only points not yet discarded: it is the residue, plus the newest point.
//
// The residue's ranges shrink strictly from bottom to top (any X ≥ Y is counted at once), so with alternating peaks and valleys
// each point lies inside the span of the two before it: s0 and s1 are the extremes so far. A long run of ever smaller reversals
// (a lightly damped ring-down) grows it by a point a reversal without bound, so at `residueCap` points the smaller half is
// closed (`closeSmallerHalf`).
export type CycleSink = (range: number, mean: number, count: 0.5 | 1) => void;

export class Rainflow {
  private readonly stack: number[] = [];
  /** Deepest the stack has been: bounded by the residue, not by the history's length. */
  maxDepth = 0;
  /** Cycles closed early to keep the residue under the cap, and how often that happened. */
  closedEarly = 0;
  closings = 0;

  constructor(private readonly count: CycleSink, readonly residueCap = 65_536) {
    if (!(residueCap >= 8)) throw new Error(`the rainflow residue cap must be at least 8, got ${residueCap}`);
  }

  add(point: number): void {
    const s = this.stack;
    s.push(point);
    if (s.length > this.maxDepth) this.maxDepth = s.length;
    while (s.length >= 3) {
      const n = s.length;
      const x = Math.abs(s[n - 1] - s[n - 2]), y = Math.abs(s[n - 2] - s[n - 3]);
      if (x < y) break;
      if (n === 3) {
        // Y contains S, the first point on the stack.
        this.count(y, (s[0] + s[1]) / 2, 0.5);
        s.shift();
      } else {
        this.count(y, (s[n - 2] + s[n - 3]) / 2, 1);
        s.splice(n - 3, 2);
      }
    }
    if (s.length >= this.residueCap) this.closeSmallerHalf();
  }

  /** Counts the residue as half cycles and empties the stack. */
  finish(): void {
    const s = this.stack;
    for (let i = 1; i < s.length; i++) this.count(Math.abs(s[i] - s[i - 1]), (s[i] + s[i - 1]) / 2, 0.5);
    s.length = 0;
  }

  /** The points on the stack now (the residue so far). */
  get depth(): number { return this.stack.length; }

  // Closes the pairs (s_j, s_j+1), j = h, h+2, …, of the upper half as full cycles, as a later reversal larger than them closes
  // such pairs (ASTM's step for Y within the stack). That reversal pairs the points from the newest one down, so it closes these
  // same pairs only when an odd number of points came between; otherwise each point with its other neighbour (ranges as near as
  // a ring-down's successive ones). Each pair lies inside the span of its neighbours, so the ranges left still shrink, s0 and
  // s1 stay (range_max is kept), and every point still counts half a cycle in the end (cycles_total is kept); where the record
  // ends before such a reversal, §5.4.4 would count those ranges as half cycles instead.
  private closeSmallerHalf(): void {
    const s = this.stack, top = s.length - 1;
    const from = Math.max(2, top >> 1);
    let j = from;
    for (; j + 1 < top; j += 2) this.count(Math.abs(s[j + 1] - s[j]), (s[j] + s[j + 1]) / 2, 1);
    this.closedEarly += (j - from) / 2;
    this.closings++;
    s.splice(from, j - from);
  }
}
