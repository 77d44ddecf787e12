// A least-squares straight line through points y at k = 0, 1, 2…, fitted from running sums in O(1) memory.

/** Running means and co-moments of the points' index k and value y. */
export interface LineSums {
  count: number;
  meanK: number;
  meanY: number;
  /** Σ(k − k̄)², Σ(y − ȳ)², Σ(k − k̄)(y − ȳ). */
  m2k: number;
  m2y: number;
  cky: number;
}

export const emptyLineSums = (): LineSums => ({ count: 0, meanK: 0, meanY: 0, m2k: 0, m2y: 0, cky: 0 });

// Welford's updates of means and co-moments (Welford 1962; the co-moment as in Pébay 2008): no sums of large squares to cancel.
export function addPoint(s: LineSums, y: number): void {
  const k = s.count++;
  const dk = k - s.meanK;
  s.meanK += dk / s.count;
  const dy = y - s.meanY;
  s.meanY += dy / s.count;
  s.m2k += dk * (k - s.meanK);
  s.m2y += dy * (y - s.meanY);
  s.cky += dk * (y - s.meanY);
}

/** The fitted line: its slope per point, its value at k = 0, and the share of the points' variance it explains (R²). */
export interface Line { slope: number; intercept: number; explained: number }

// Ordinary least squares: slope = Σ(k − k̄)(y − ȳ) / Σ(k − k̄)², R² = slope² Σ(k − k̄)² / Σ(y − ȳ)² (any statistics handbook).
export function fittedLine(s: LineSums): Line | null {
  if (s.count < 2) return null;
  const slope = s.cky / s.m2k;
  const explained = s.m2y > 0 ? Math.min(1, (slope * s.cky) / s.m2y) : 0;
  return { slope, intercept: s.meanY - slope * s.meanK, explained };
}
