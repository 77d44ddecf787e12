// Exponential time weighting of the squared signal (IEC 61672-1:2013: F = 0.125 s, S = 1 s), from zero, with its running maximum:
// y[n] = y[n−1] + α·(x[n]² − y[n−1]), α = 1 − e^(−1/(τ·fs)), the exact sampled response of the first-order averager.
export class ExponentialMeanSquare {
  private readonly alpha: number;
  /** The weighted mean square now, and its largest value so far. */
  value = 0;
  max = 0;
  constructor(tauS: number, fs: number) { this.alpha = 1 - Math.exp(-1 / (tauS * fs)); }

  push(x: Float64Array): void {
    const a = this.alpha;
    let v = this.value, m = this.max;
    for (let i = 0; i < x.length; i++) { v += a * (x[i] * x[i] - v); if (v > m) m = v; }
    this.value = v; this.max = m;
  }

  /** The same, skipping the samples `gone` marks: the average holds through them, as if they were not there. */
  pushKept(x: Float64Array, gone: Uint8Array): void {
    const a = this.alpha;
    let v = this.value, m = this.max;
    for (let i = 0; i < x.length; i++) { if (gone[i]) continue; v += a * (x[i] * x[i] - v); if (v > m) m = v; }
    this.value = v; this.max = m;
  }
}

// Step response of the exponential average started from zero (IEC 61672-1 time weighting): T seconds in, a steady mean
// square reads 1 − e^(−T/τ) of itself, 10·lg(1 − e^(−T/τ)) dB; sampled, N samples give 1 − (1 − α)^N = 1 − e^(−N/(τ·fs)) exactly.
export const startShortfallDb = (durationS: number, tauS: number): number => 10 * Math.log10(-Math.expm1(-durationS / tauS));

// The shortest recording whose steady mean square the average reaches within `toleranceDb`: τ·ln(1/(1 − 10^(−tol/10))),
// from the step response above; 3.78 τ for 0.1 dB.
export const settlingS = (tauS: number, toleranceDb = 0.1): number => tauS * Math.log(1 / -Math.expm1(-toleranceDb / 10 * Math.LN10));

/** The time constants a recording of `durationS` is too short to settle within `toleranceDb`, each with its shortfall in dB. */
export function unsettled<T extends number>(durationS: number, constantsS: readonly T[], toleranceDb = 0.1): { tau: T; shortfallDb: number }[] {
  if (!(durationS > 0)) return [];
  return constantsS.filter((tau) => durationS < settlingS(tau, toleranceDb)).map((tau) => ({ tau, shortfallDb: startShortfallDb(durationS, tau) }));
}
