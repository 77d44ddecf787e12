// True peak by 4× oversampling (ITU-R BS.1770-4 Annex 2) and the peak-capture flag built on it.
import { describe, expect, it } from 'vitest';
import { interpolateAt, SUPPORT, TAP_PAIRS, TruePeak } from '../stages/dsp/true-peak.js';
import { peakUnderestimate } from '../stages/quality/peak-capture.js';
import { simdPeakScan } from '../stages/dsp/fft-simd.js';
import { uniform } from './dsp-signals.js';
import { fixture, readJson } from './helpers.js';

/** Feeds a signal in chunks of the given lengths (cycled), as the reader would. */
function truePeakOf(x: Float64Array, guard: number, chunks = [65536], simd = false) {
  const t = new TruePeak(guard, simd ? simdPeakScan(TAP_PAIRS) : undefined);
  for (let i = 0, j = 0; i < x.length; j++) {
    const n = chunks[j % chunks.length];
    t.push(x.subarray(i, Math.min(x.length, i + n)));
    i += n;
  }
  return t.result();
}

/** Every 4× point of the whole signal (where the interpolator has its full support): the expensive way. */
function fullRate(x: Float64Array): number {
  let m = 0;
  for (let n = 0; n < x.length; n++) {
    m = Math.max(m, Math.abs(x[n]));
    if (n >= SUPPORT && n + SUPPORT < x.length) for (let p = 1; p < 4; p++) m = Math.max(m, Math.abs(interpolateAt(x, n, p)));
  }
  return m;
}

/** Seeded generator (mulberry32) and Gaussian noise low-passed by a windowed sinc: band-limited test signals. */
function noise(seed: number) {
  let a = seed >>> 0;
  const u = () => { a = (a + 0x6d2b79f5) >>> 0; let t = Math.imul(a ^ (a >>> 15), a | 1); t ^= t + Math.imul(t ^ (t >>> 7), t | 61); return ((t ^ (t >>> 14)) >>> 0) / 4294967296; };
  return () => Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u());
}
function bandLimited(n: number, fc: number, seed: number): Float64Array {
  const g = noise(seed), L = 64;
  const h = Array.from({ length: 2 * L + 1 }, (_, j) => { const k = j - L; return (k === 0 ? 2 * fc : Math.sin(2 * Math.PI * fc * k) / (Math.PI * k)) * (0.5 + 0.5 * Math.cos((Math.PI * k) / L)); });
  const w = Array.from({ length: n + 2 * L }, g);
  return Float64Array.from({ length: n }, (_, i) => h.reduce((s, hk, k) => s + hk * w[i + k], 0));
}

describe('true peak (ITU-R BS.1770-4 Annex 2: 4× oversampling)', () => {
  it('a sine at 4 samples per cycle with its peaks midway between samples: sampled peak cos(π/4) ≈ 0.707, true peak within 1 % of the amplitude', () => {
    const A = 2.5;
    const x = Float64Array.from({ length: 4000 }, (_, n) => A * Math.cos((2 * Math.PI * (n + 0.5)) / 4));
    const { samplePeak, truePeak } = truePeakOf(x, Math.cos(Math.PI / 4), [997]);
    // Derived: the samples fall π/4 either side of each crest.
    expect(samplePeak / A).toBeCloseTo(Math.cos(Math.PI / 4), 12);
    expect(1 - samplePeak / A).toBeCloseTo(peakUnderestimate(4), 12);
    expect(Math.abs(truePeak - A) / A).toBeLessThan(0.01);
  });

  it('matches the band-limited peak scipy.signal.resample finds at 64 points a sample, within the 4× grid\'s own limit cos(π·f/(4·fs))', () => {
    const ref = readJson(fixture('trend-vectors.json'));
    expect(ref.made_by).toMatch(/scipy/);
    for (const c of ref.true_peak) {
      // Three periods of the periodic signal, so the middle one has the interpolator's full support.
      const x = Float64Array.from({ length: 3 * c.n }, (_, i) => c.cycles.reduce((s: number, k: number, j: number) => s + c.amplitudes[j] * Math.cos((2 * Math.PI * k * i) / c.n + c.phases[j]), 0));
      const { samplePeak, truePeak } = truePeakOf(x, Math.cos(Math.PI / c.samples_per_cycle), [4096, 333]);
      expect(samplePeak).toBeCloseTo(c.sample_peak, 9);
      const slack = 5e-4 * c.amplitudes.reduce((a: number, b: number) => a + b, 0); // the interpolator's error, < 2·10⁻⁴ of each tone
      expect(truePeak).toBeLessThanOrEqual(c.true_peak + slack);
      expect(truePeak).toBeGreaterThanOrEqual(c.true_peak * Math.cos(Math.PI / (4 * c.samples_per_cycle)) - slack);
      expect(truePeak).toBeGreaterThanOrEqual(samplePeak);
    }
  });

  it('interpolating only around candidate samples finds what interpolating every sample finds, chunk edges included', () => {
    for (const r of [2.56, 5, 10]) {
      for (let seed = 1; seed <= 12; seed++) {
        const x = bandLimited(3000 + seed * 17, 1 / r, seed * 101 + Math.round(r * 10));
        const got = truePeakOf(x, Math.cos(Math.PI / r), [[1, 7, 100], [4096], [13, 5000]][seed % 3]);
        expect(got.truePeak, `r = ${r}, seed ${seed}`).toBeCloseTo(fullRate(x), 12);
      }
    }
  });

  it('chunks longer than the scanner\'s block are scanned in blocks with the same result as interpolating every sample', () => {
    for (let seed = 1; seed <= 3; seed++) {
      const x = bandLimited(50_000 + seed * 1013, 1 / 2.56, seed * 7);
      for (const chunks of [[65536], [16336], [16337, 40000]]) {
        for (const simd of [false, true]) expect(truePeakOf(x, Math.cos(Math.PI / 2.56), chunks, simd).truePeak, `seed ${seed}, chunks ${chunks}`).toBeCloseTo(fullRate(x), 12);
      }
    }
  });

  it('takes a flat top (a tacho pulse, a clipped stretch) as its own peak, not the ringing of its edges', () => {
    const x = Float64Array.from({ length: 12800 }, (_, i) => ((i / 12800) * 49.5) % 1 < 0.1 ? 5 : 0);
    expect(truePeakOf(x, Math.cos(Math.PI / 5.12))).toEqual({ samplePeak: 5, truePeak: 5 });
  });

  it('ignores values that are not numbers, and a recording shorter than the interpolator', () => {
    const x = Float64Array.from([0.1, NaN, -3, Infinity, 2, 0.5]);
    expect(truePeakOf(x, 0.3, [2])).toEqual({ samplePeak: 3, truePeak: 3 });
  });

  it('the WebAssembly scan finds exactly what the TypeScript scan finds, whatever the chunking: noise to Nyquist, flat tops, gaps and spikes', () => {
    for (let seed = 1; seed <= 6; seed++) {
      const u = uniform(seed), n = 20_000 + seed * 1013;
      // A tone with white noise up to Nyquist (many candidates), 24-bit codes; then a flat top, missing values, an infinity, spikes.
      const x = Float64Array.from({ length: n }, (_, i) => Math.round((0.3 * Math.sin((2 * Math.PI * 50 * i) / 25600) + 0.1 * (u() - 0.5)) * 8388607) / 8388607);
      if (seed % 2) { x.fill(1.2, 5000, 5030); x[7001] = NaN; x[7003] = -Infinity; x[9000] = 0.9; x[9002] = -0.95; x[12] = 0.6; }
      const sizes = [[1, 2, 3, 29], [65536], [13, 5000, 1, 1], [4096, 7, 24, 25], [100], [333, 1]][seed - 1];
      for (const guard of [Math.cos(Math.PI / 2.56), Math.cos(Math.PI / 10)]) {
        const want = truePeakOf(x, guard, [65536]);
        expect(truePeakOf(x, guard, sizes, true), `seed ${seed}, guard ${guard}`).toEqual(want);
        // Noise up to Nyquist peaks between the samples (odd seeds: the flat top is the peak).
        if (seed % 2 === 0) expect(want.truePeak).toBeGreaterThan(want.samplePeak);
      }
    }
    // The single-precision estimate that lets the scan pass over candidates: a rising amplitude (the running true peak keeps
    // growing, so many candidates are made in full), scales beyond float's range and below its normal range, any guard.
    for (let seed = 1; seed <= 4; seed++) {
      const u = uniform(seed + 40), n = 30_000;
      const shape = Float64Array.from({ length: n }, (_, i) => (i / n) * (0.3 * Math.sin((2 * Math.PI * 700 * i) / 25600) + 0.2 * (u() - 0.5)));
      for (const scale of [1, 1e35, 1e-300, 3e-310]) {
        const x = shape.map((v) => v * scale);
        for (const guard of [Math.cos(Math.PI / 2.56), 0, 0.9]) {
          expect(truePeakOf(x, guard, [[65536], [777, 1], [4096, 5]][seed % 3], true), `seed ${seed}, scale ${scale}, guard ${guard}`).toEqual(truePeakOf(x, guard, [65536]));
        }
      }
    }
    for (const x of [Float64Array.from([0.1, NaN, -3, Infinity, 2, 0.5]), new Float64Array(0), Float64Array.from([-1])]) expect(truePeakOf(x, 0.3, [1], true)).toEqual(truePeakOf(x, 0.3, [2]));
  });
});
