// A second-order section fitted to a wanted magnitude: poles given (placed by the caller, e.g. by the matched-z transform
// z = e^(sT)), numerator found by least squares on the squared magnitude |B(e^jω)|² = r0 + 2·r1·cos ω + 2·r2·cos 2ω, which is
// linear in the numerator's autocorrelation r0, r1, r2, then taken as its minimum-phase spectral factor (Oppenheim & Schafer,
// Discrete-Time Signal Processing, §5.6 on minimum-phase systems).
import { abs, add, c, expi, mul, scale, sqrt, sub, type C } from './complex.js';
import type { Section } from './butterworth.js';

/** |1 + a1·e^(−jω) + a2·e^(−2jω)|². */
const denominatorSquared = (a1: number, a2: number, w: number) => {
  const re = 1 + a1 * Math.cos(w) + a2 * Math.cos(2 * w), im = -a1 * Math.sin(w) - a2 * Math.sin(2 * w);
  return re * re + im * im;
};

/** Solves the 3 × 3 system m·x = v by Cramer's rule. */
function solve3(m: number[][], v: number[]): number[] {
  const det = (a: number[][]) => a[0][0] * (a[1][1] * a[2][2] - a[1][2] * a[2][1]) - a[0][1] * (a[1][0] * a[2][2] - a[1][2] * a[2][0]) + a[0][2] * (a[1][0] * a[2][1] - a[1][1] * a[2][0]);
  const d = det(m);
  return [0, 1, 2].map((k) => det(m.map((row, i) => row.map((x, j) => (j === k ? v[i] : x)))) / d);
}

/** The root of z² − w·z + 1 = 0 inside (or on) the unit circle: one of a reciprocal pair z, 1/z with z + 1/z = w. */
function innerRoot(w: C): C {
  const d = sqrt(sub(mul(w, w), c(4)));
  const a = scale(add(w, d), 0.5), b = scale(sub(w, d), 0.5);
  return abs(a) <= abs(b) ? a : b;
}

/**
 * Fits b0…b2 of [b0, b1, b2, 1, a1, a2] so that |H| follows `wanted(f)` from `from` to `to` Hz (log-spaced points,
 * relative error), for the given denominator. Returns the section, minimum phase.
 */
export function fitSection(wanted: (f: number) => number, a1: number, a2: number, fs: number, from: number, to: number, points = 400): Section {
  const ata = [[0, 0, 0], [0, 0, 0], [0, 0, 0]], atb = [0, 0, 0];
  for (let i = 0; i < points; i++) {
    const f = from * (to / from) ** (i / (points - 1)), w = (2 * Math.PI * f) / fs;
    const target = wanted(f) ** 2 * denominatorSquared(a1, a2, w);
    const basis = [1, 2 * Math.cos(w), 2 * Math.cos(2 * w)].map((x) => x / target); // relative error: divide by the target
    for (let j = 0; j < 3; j++) {
      atb[j] += basis[j];
      for (let k = 0; k < 3; k++) ata[j][k] += basis[j] * basis[k];
    }
  }
  const [r0, r1, r2] = solve3(ata, atb);
  // R(z) = r2·z² + r1·z + r0 + r1/z + r2/z²; with w = z + 1/z it is r2·w² + r1·w + (r0 − 2·r2), a quadratic in w.
  let zeros: C[];
  if (Math.abs(r2) < 1e-12 * Math.abs(r0)) zeros = [innerRoot(c(-r0 / r1))];
  else {
    const d = sqrt(c(r1 * r1 - 4 * r2 * (r0 - 2 * r2)));
    zeros = [add(c(-r1), d), sub(c(-r1), d)].map((w) => innerRoot(scale(w, 1 / (2 * r2))));
  }
  // Monic numerator Π(1 − z_k·z⁻¹); conjugate pairs (or two real roots) give real coefficients.
  const q1 = -zeros.reduce((s, z) => s + z.re, 0), q2 = zeros.length === 2 ? mul(zeros[0], zeros[1]).re : 0;
  // Gain: |B|² = R at the point where R is largest (away from any near-zero).
  let best = 0, gain2 = 1;
  for (let i = 0; i <= 64; i++) {
    const w = (Math.PI * i) / 64, r = r0 + 2 * r1 * Math.cos(w) + 2 * r2 * Math.cos(2 * w);
    if (r > best) {
      const z1 = expi(-w), q = add(add(c(1), scale(z1, q1)), scale(mul(z1, z1), q2));
      best = r; gain2 = r / (abs(q) ** 2);
    }
  }
  const g = Math.sqrt(gain2);
  return [g, g * q1, g * q2, 1, a1, a2];
}
