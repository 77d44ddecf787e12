// Medians of the robust spread, held against sorting: the middle value, or the mean of the two middle values (common practice;
// numpy.median's definition).
import { describe, expect, it } from 'vitest';
import { median, medianBins } from '../stages/dsp/median.js';
import { uniform } from './dsp-signals.js';

function bySorting(v: Float64Array): number {
  const s = Float64Array.from(v).sort(), m = s.length >> 1;
  return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2;
}

describe('median', () => {
  it('agrees with sorting on long samples: tones with noise, their deviations, ties, an outlier, two values, a constant', () => {
    const bins = medianBins(); // reused from call to call, as a stage reuses it
    for (let seed = 1; seed <= 6; seed++) {
      const u = uniform(seed);
      for (const n of [2047, 2048, 2049, 8192, 8193, 5001]) {
        const tone = Float64Array.from({ length: n }, (_, i) => Math.round((0.3 * Math.sin((2 * Math.PI * 50 * seed * i) / 3200) + 0.1 * (u() - 0.5)) * 32767) / 32768);
        const middle = bySorting(tone), deviations = tone.map((x) => Math.abs(x - middle));
        const outlier = tone.slice(); outlier[n >> 2] = 1e12;
        const twoValues = Float64Array.from({ length: n }, (_, i) => (i % 2 ? 0 : 1)); // the middle pair falls in two bins
        const halves = Float64Array.from({ length: n }, (_, i) => (i < n / 2 ? -3 : 7 + u()));
        for (const x of [tone, deviations, outlier, twoValues, halves, new Float64Array(n).fill(-2.5), Float64Array.from({ length: n }, u)]) {
          const want = bySorting(x), copy = x.slice();
          expect(median(copy, seed % 2 ? bins : undefined), `seed ${seed}, n ${n}`).toBe(want);
          expect(copy.slice().sort(), 'the values are only reordered').toEqual(x.slice().sort());
        }
      }
    }
  });

  it('takes infinities as values', () => {
    const x = Float64Array.from({ length: 4096 }, (_, i) => (i % 3 ? i : -Infinity));
    x[7] = Infinity;
    expect(median(x.slice())).toBe(bySorting(x));
  });
});
