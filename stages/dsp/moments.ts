// Central moments up to the fourth order, accumulated chunk by chunk without loss of precision.

/** Count, mean and central moment sums M2..M4 of a set of samples, plus its extremes. */
export interface Moments {
  n: number;
  mean: number;
  m2: number;
  m3: number;
  m4: number;
  min: number;
  max: number;
  /** Samples that were not finite numbers (NaN, ±Infinity) and so were left out. */
  nonFinite: number;
}

export function emptyMoments(): Moments {
  return { n: 0, mean: 0, m2: 0, m3: 0, m4: 0, min: Infinity, max: -Infinity, nonFinite: 0 };
}

// Corrected two-pass algorithm on one chunk (Chan, Golub & LeVeque 1983): sums of deviations from a provisional mean, then shifted to the exact mean.
export function chunkMoments(x: Float64Array): Moments {
  let n = 0, sum = 0, min = Infinity, max = -Infinity, nonFinite = 0;
  for (let i = 0; i < x.length; i++) {
    const v = x[i];
    if (!Number.isFinite(v)) { nonFinite++; continue; }
    n++; sum += v;
    if (v < min) min = v;
    if (v > max) max = v;
  }
  if (n === 0) return { ...emptyMoments(), nonFinite };
  const m0 = sum / n;
  let s1 = 0, s2 = 0, s3 = 0, s4 = 0;
  if (nonFinite === 0) {
    for (let i = 0; i < x.length; i++) {
      const d = x[i] - m0, d2 = d * d;
      s1 += d; s2 += d2; s3 += d2 * d; s4 += d2 * d2;
    }
  } else {
    for (let i = 0; i < x.length; i++) {
      const v = x[i];
      if (!Number.isFinite(v)) continue;
      const d = v - m0, d2 = d * d;
      s1 += d; s2 += d2; s3 += d2 * d; s4 += d2 * d2;
    }
  }
  const c = s1 / n;
  const m2 = Math.max(0, s2 - s1 * c);
  const m3 = s3 - 3 * c * s2 + 2 * c * c * s1;
  const m4 = s4 - 4 * c * s3 + 6 * c * c * s2 - 3 * c * c * c * s1;
  return { n, mean: m0 + c, m2, m3, m4, min, max, nonFinite };
}

// Pairwise combination of central moments (Chan, Golub & LeVeque 1979; higher orders after Pébay 2008, SAND2008-6212).
export function combineMoments(a: Moments, b: Moments): Moments {
  const out = { ...a };
  foldMoments(out, b.n, b.mean, b.m2, b.m3, b.m4, b.min, b.max, b.nonFinite);
  return out;
}

/**
 * The same pairwise update (Chan, Golub & LeVeque 1979; Pébay 2008), in place: a part's count, mean, central sums,
 * extremes and missing values folded into `into`, with no new object, since a channel's envelope folds one part for
 * every block of a few thousand samples.
 */
export function foldMoments(into: Moments, nb: number, meanB: number, m2b: number, m3b: number, m4b: number, minB: number, maxB: number, nonFiniteB: number): void {
  const nonFinite = into.nonFinite + nonFiniteB;
  if (into.n === 0) {
    into.n = nb; into.mean = meanB; into.m2 = m2b; into.m3 = m3b; into.m4 = m4b; into.min = minB; into.max = maxB; into.nonFinite = nonFinite;
    return;
  }
  if (nb === 0) { into.nonFinite = nonFinite; return; }
  const na = into.n, n = na + nb;
  const d = meanB - into.mean, dn = d / n, dn2 = dn * dn;
  const m2a = into.m2, m3a = into.m3;
  into.mean = into.mean + dn * nb;
  into.m2 = m2a + m2b + d * dn * na * nb;
  into.m3 = m3a + m3b + d * dn2 * na * nb * (na - nb) + 3 * dn * (na * m2b - nb * m2a);
  into.m4 = into.m4 + m4b + d * dn2 * dn * na * nb * (na * na - na * nb + nb * nb)
    + 6 * dn2 * (na * na * m2b + nb * nb * m2a) + 4 * dn * (na * m3b - nb * m3a);
  into.n = n;
  into.min = Math.min(into.min, minB);
  into.max = Math.max(into.max, maxB);
  into.nonFinite = nonFinite;
}

/** Population statistics (divisor n) of accumulated moments; null where undefined. */
export function describe(m: Moments) {
  if (m.n === 0) {
    return { mean: null, std: null, rms: null, min: null, max: null, peak: null, peak_to_peak: null, crest_factor: null, skewness: null, kurtosis: null };
  }
  const variance = m.m2 / m.n;
  const std = Math.sqrt(variance);
  const rms = Math.sqrt(m.mean * m.mean + variance);
  const peak = Math.max(Math.abs(m.min), Math.abs(m.max));
  return {
    mean: m.mean,
    std,
    rms,
    min: m.min,
    max: m.max,
    peak,
    peak_to_peak: m.max - m.min,
    crest_factor: rms > 0 ? peak / rms : null,
    // Moment ratios are meaningless when the spread is at rounding level of the mean.
    skewness: variance > 0 ? (m.m3 / m.n) / Math.pow(variance, 1.5) : null,
    kurtosis: variance > 0 ? (m.m4 / m.n) / (variance * variance) : null,
  };
}
