// The test signals of test/fixtures/make-dsp-vectors.py, rebuilt sample for sample.

export function testSignal(n: number, fs: number): Float64Array {
  return Float64Array.from({ length: n }, (_, i) => {
    const t = i / fs;
    return Math.sin(2 * Math.PI * 137.3 * t) + 0.5 * Math.sin(2 * Math.PI * 3100.0 * t + 0.3)
      + 0.3 * Math.sin(2 * Math.PI * (20.0 * t + 0.5 * 2000.0 * t * t))
      + 0.2 * (Math.floor(i / 50) % 2 === 0 ? 1 : -1) + 0.7;
  });
}

export function amSignal(n: number, fs: number): Float64Array {
  return Float64Array.from({ length: n }, (_, i) => {
    const t = i / fs;
    return (1 + 0.5 * Math.cos(2 * Math.PI * 37.0 * t)) * Math.cos(2 * Math.PI * 2000.0 * t);
  });
}

/** Feeds x to push() in chunks of uneven size, as a reader would. */
export function inChunks(x: Float64Array, push: (c: Float64Array) => void, sizes = [1000, 37, 4096, 1]): void {
  for (let i = 0, k = 0; i < x.length; k++) {
    const n = sizes[k % sizes.length];
    push(x.subarray(i, Math.min(x.length, i + n)));
    i += n;
  }
}

export const maxAbsDiff = (a: ArrayLike<number>, b: ArrayLike<number>) => {
  let m = 0;
  for (let i = 0; i < a.length; i++) m = Math.max(m, Math.abs(a[i] - b[i]));
  return m;
};

/** Seeded uniform generator (mulberry32) so the checks are repeatable. */
export function uniform(seed: number) {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = Math.imul(a ^ (a >>> 15), a | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** |a − b| / |b|. */
export const relative = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);

/** The largest difference of two series, relative to the largest magnitude of the second. */
export const maxRelative = (got: ArrayLike<number>, want: ArrayLike<number>) => {
  let peak = 0, worst = 0;
  for (let k = 0; k < want.length; k++) peak = Math.max(peak, Math.abs(want[k]));
  for (let k = 0; k < want.length; k++) worst = Math.max(worst, Math.abs(got[k] - want[k]) / peak);
  return worst;
};

/** How many samples are not finite (NaN, ±Inf). */
export const countMissing = (c: Float64Array) => c.reduce((m, v) => m + (Number.isFinite(v) ? 0 : 1), 0);
