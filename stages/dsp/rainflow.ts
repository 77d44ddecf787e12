// Rainflow counting of ASTM E1049-85 (reapproved 2017) §5.4.4, streaming: turning points arrive one at a time; X is the most
// recent range and Y the one before it. While X ≥ Y: Y is one cycle (its two points discarded), or, when Y holds the starting
// point S, one half cycle (S discarded, the start moving to Y's second point). At the end every range left (the residue) is a
// half cycle. The stack holds only points not yet discarded: it is the residue, plus the newest point.
export type CycleSink = (range: number, mean: number, count: 0.5 | 1) => void;

export class Rainflow {
  private readonly stack: number[] = [];
  /** Deepest the stack has been: bounded by the residue, not by the history's length. */
  maxDepth = 0;

  constructor(private readonly count: CycleSink) {}

  add(point: number): void {
    const s = this.stack;
    s.push(point);
    if (s.length > this.maxDepth) this.maxDepth = s.length;
    while (s.length >= 3) {
      const n = s.length;
      const x = Math.abs(s[n - 1] - s[n - 2]), y = Math.abs(s[n - 2] - s[n - 3]);
      if (x < y) return;
      if (n === 3) {
        // Y contains S, the first point on the stack.
        this.count(y, (s[0] + s[1]) / 2, 0.5);
        s.shift();
      } else {
        this.count(y, (s[n - 2] + s[n - 3]) / 2, 1);
        s.splice(n - 3, 2);
      }
    }
  }

  /** Counts the residue as half cycles and empties the stack. */
  finish(): void {
    const s = this.stack;
    for (let i = 1; i < s.length; i++) this.count(Math.abs(s[i] - s[i - 1]), (s[i] + s[i - 1]) / 2, 0.5);
    s.length = 0;
  }

  /** The points on the stack now (the residue so far). */
  get depth(): number { return this.stack.length; }
}
