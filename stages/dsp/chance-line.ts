// The level over their median that the largest of a noise spectrum's bins reaches by chance, in dB, for a Welch estimate.

import type { WelchOptions } from './welch.js';
import { makeWindow } from './window.js';

// Correlation between periodograms of Gaussian noise at one frequency from segments `shift` samples apart:
// (Σ w[n]·w[n + shift])² / (Σ w[n]²)² (Percival and Walden, Spectral Analysis for Physical Applications, 1993, from memory).
export function segmentCorrelation(w: Float64Array, shift: number): number {
  let cross = 0, power = 0;
  for (let n = 0; n < w.length; n++) { power += w[n] * w[n]; if (n + shift < w.length) cross += w[n] * w[n + shift]; }
  return power > 0 ? (cross / power) ** 2 : 0;
}

// Equivalent degrees of freedom of a Welch estimate averaging K overlapping segments: 2K / (1 + 2 Σ_{j=1}^{K−1} (1 − j/K) ρ(j·hop))
// (Welch, IEEE Trans. AU-15, 1967; Percival and Walden 1993, from memory).
export function welchDegrees(segments: number, w: Float64Array, hop: number): number {
  let sum = 0;
  for (let j = 1; j < segments && j * hop < w.length; j++) sum += (1 - j / segments) * segmentCorrelation(w, j * hop);
  return (2 * segments) / (1 + 2 * sum);
}

// Upper quantile z of the standard normal for a tail probability p ≤ 0.5 (Abramowitz and Stegun 26.2.23, error < 4.5·10⁻⁴).
export function normalUpper(p: number): number {
  const t = Math.sqrt(-2 * Math.log(p));
  return t - (2.515517 + 0.802853 * t + 0.010328 * t * t) / (1 + 1.432788 * t + 0.189269 * t * t + 0.001308 * t * t * t);
}

// Quantile of χ²(ν) at the normal quantile z by the cube-root approximation (Wilson and Hilferty, PNAS 17, 1931).
export const chiSquareAt = (nu: number, z: number) => nu * Math.max(0, 1 - 2 / (9 * nu) + z * Math.sqrt(2 / (9 * nu))) ** 3;

/**
 * The chance level: how far over the median of noise bins the largest of `bins` of them reaches with probability `p` (one
 * spectrum of noise in a thousand, by default), each bin a χ²(ν)/ν variable of the Welch estimate's degrees of freedom ν
 * (taking the bins as independent, which neighbouring bins are not: the level errs high, on the safe side).
 */
export function chanceLineDb(segments: number, bins: number, o: WelchOptions, p = 1e-3): number {
  if (segments < 1 || bins < 1) return Infinity;
  const hop = o.segment - Math.floor(o.overlap * o.segment);
  const nu = welchDegrees(segments, makeWindow(o.window, o.segment), Math.max(1, hop));
  return 10 * Math.log10(chiSquareAt(nu, normalUpper(p / bins)) / chiSquareAt(nu, 0));
}
