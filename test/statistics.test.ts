// Statistics against textbook values and against scipy/numpy on the sample archive.
import { describe, expect, it } from 'vitest';
import { chunkMoments, combineMoments, describe as describeMoments, emptyMoments, foldMoments } from '../stages/dsp/moments.js';
import { statistics } from '../stages/stats.js';
import type { ChannelContext, Stage } from '../stages/stage.js';
import { uniform } from './dsp-signals.js';

/** Feeds a signal through the statistics stage in uneven chunks, as the pipeline would: shared products first, then the stage. */
function stats(x: Float64Array, chunk = 1000) {
  const shared = new Map<string, Stage>();
  const ctx: ChannelContext = {
    name: 'x', quantity: 'q', unit: 'u', sampleRate: 1000, range: null, bits: null, maxFrequencyHz: null, stepSize: null, fullScale: null,
    declared: true, declaredDurationS: null, timeSteps: () => null, note: () => {}, addRow: () => {}, flag: () => {}, evidence: () => {},
    shared: <T extends Stage>(k: string, make: () => T) => (shared.get(k) ?? shared.set(k, make()).get(k)) as T,
  };
  const s = statistics.create(ctx, {});
  for (let i = 0; i < x.length; i += chunk) {
    const part = x.subarray(i, Math.min(x.length, i + chunk));
    for (const p of shared.values()) p.push(part);
    s.push(part);
  }
  return s.finish() as Record<string, number>;
}

// Whole periods of a waveform sampled at many points per period.
const periodic = (f: (phase: number) => number, n = 100_000, periods = 50) => Float64Array.from({ length: n }, (_, i) => f(((i * periods) / n) % 1));

describe('statistics of textbook signals (common practice; e.g. any signal-processing handbook)', () => {
  it('sine of amplitude A: RMS A/√2, crest factor √2, Pearson kurtosis 1.5, skewness 0', () => {
    const A = 3.7;
    const s = stats(periodic((p) => A * Math.sin(2 * Math.PI * p)), 777);
    expect(s.rms).toBeCloseTo(A / Math.SQRT2, 9);
    expect(s.crest_factor).toBeCloseTo(Math.SQRT2, 6);
    expect(s.kurtosis).toBeCloseTo(1.5, 9);
    expect(s.skewness).toBeCloseTo(0, 9);
    expect(s.peak_to_peak).toBeCloseTo(2 * A, 6);
  });

  it('square wave: crest factor 1, kurtosis 1; triangle: crest factor √3, kurtosis 1.8', () => {
    const sq = stats(periodic((p) => (p < 0.5 ? 1 : -1)));
    expect(sq.crest_factor).toBeCloseTo(1, 12);
    expect(sq.kurtosis).toBeCloseTo(1, 12);
    const tri = stats(periodic((p) => (p < 0.5 ? 4 * p - 1 : 3 - 4 * p), 100_000, 1));
    expect(tri.crest_factor).toBeCloseTo(Math.sqrt(3), 3);
    expect(tri.kurtosis).toBeCloseTo(1.8, 3);
  });

  it('Gaussian noise: kurtosis 3, skewness 0 (within sampling error of 10⁶ samples)', () => {
    const u = uniform(42);
    const x = Float64Array.from({ length: 1_000_000 }, () => Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u()));
    const s = stats(x, 65536);
    // Standard errors: sqrt(24/n) ≈ 0.005 for kurtosis, sqrt(6/n) ≈ 0.0024 for skewness; allow 4 of them.
    expect(Math.abs(s.kurtosis - 3)).toBeLessThan(0.02);
    expect(Math.abs(s.skewness)).toBeLessThan(0.01);
    expect(s.std).toBeCloseTo(1, 2);
  });

  it('uniform noise: kurtosis 1.8', () => {
    const u = uniform(7);
    const s = stats(Float64Array.from({ length: 1_000_000 }, () => 2 * u() - 1), 4096);
    expect(Math.abs(s.kurtosis - 1.8)).toBeLessThan(0.01);
  });

  it('keeps 9 significant digits of std for an offset of 1e6 and an amplitude of 1e-3', () => {
    const n = 2_000_000;
    const x = Float64Array.from({ length: n }, (_, i) => 1e6 + 1e-3 * Math.sin(2 * Math.PI * i / 1000 + 0.1));
    // Reference: the deviations x − 1e6 are exact in floating point (Sterbenz), so a plain two-pass std of them is exact to rounding.
    const d = x.map((v) => v - 1e6);
    const m = d.reduce((a, b) => a + b, 0) / n;
    const ref = Math.sqrt(d.reduce((a, b) => a + (b - m) ** 2, 0) / n);
    const s = stats(x, 65536);
    expect(Math.abs(s.std - ref) / ref).toBeLessThan(1e-9);
    // The textbook one-pass formula sqrt(E[x²] − E[x]²) loses everything here, which is what the test guards against.
    const naive = Math.sqrt(Math.max(0, x.reduce((a, b) => a + b * b, 0) / n - (x.reduce((a, b) => a + b, 0) / n) ** 2));
    expect(Math.abs(naive - ref) / ref).toBeGreaterThan(1e-3);
  });

  it('gives the same moments whatever the chunking (Chan et al. combination)', () => {
    const u = uniform(3);
    const x = Float64Array.from({ length: 10_007 }, () => u() ** 3 * 10 - 2);
    const whole = describeMoments(chunkMoments(x));
    for (const chunk of [1, 2, 13, 4096]) {
      const parts = stats(x, chunk);
      for (const k of ['mean', 'std', 'skewness', 'kurtosis'] as const) expect(parts[k]).toBeCloseTo(whole[k]!, 10);
    }
  });

  it('folds parts in place to the moments of the whole, empty and missing-only parts included (Pébay 2008)', () => {
    const u = uniform(11);
    const x = Float64Array.from({ length: 5_000 }, (_, i) => (i % 97 === 0 ? NaN : u() * 4 - 1));
    let combined = emptyMoments();
    const folded = emptyMoments();
    for (const [from, to] of [[0, 0], [0, 1], [1, 1], [1, 700], [700, 701], [701, 3000], [3000, 5000]]) {
      const part = chunkMoments(x.subarray(from, to));
      combined = combineMoments(combined, part);
      foldMoments(folded, part.n, part.mean, part.m2, part.m3, part.m4, part.min, part.max, part.nonFinite);
    }
    expect(folded).toEqual(combined);
    const whole = chunkMoments(x);
    for (const k of ['mean', 'm2', 'm3', 'm4'] as const) expect(Math.abs(folded[k] - whole[k])).toBeLessThan(1e-11 * Math.max(1, Math.abs(whole[k])));
    expect([folded.n, folded.nonFinite, folded.min, folded.max]).toEqual([whole.n, whole.nonFinite, whole.min, whole.max]);
  });

  it('leaves missing samples out and counts them; a flat channel has no skewness or kurtosis', () => {
    const s = stats(Float64Array.from([1, NaN, 3, Infinity]));
    expect(s.mean).toBe(2);
    expect(s.n_nonfinite).toBe(2);
    const flat = describeMoments(combineMoments(emptyMoments(), chunkMoments(new Float64Array(10).fill(5))));
    expect(flat.std).toBe(0);
    expect(flat.kurtosis).toBeNull();
    expect(flat.crest_factor).toBe(1);
  });
});
