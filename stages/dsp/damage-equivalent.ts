// Palmgren–Miner damage-equivalent range: for an S–N curve N = C·S^(−m), the damage Σ n_i/N_i of counted cycles equals that of
// Σ n_i cycles of the constant range S_eq = (Σ n_i·S_i^m / Σ n_i)^(1/m); C cancels, only the slope m matters.
export class DamageEquivalent {
  private sum = 0;
  /** Cycles counted (half cycles count 0.5) and the largest range. */
  cycles = 0;
  maxRange = 0;

  constructor(private readonly slope: number) {
    if (!(slope > 0)) throw new Error(`the S–N slope must be positive, got ${slope}`);
  }

  add(range: number, count: number): void {
    this.sum += count * range ** this.slope;
    this.cycles += count;
    if (range > this.maxRange) this.maxRange = range;
  }

  /** S_eq, or null when nothing was counted. */
  range(): number | null {
    return this.cycles > 0 ? (this.sum / this.cycles) ** (1 / this.slope) : null;
  }
}
