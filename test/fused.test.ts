// The fused pass against the straightforward formulas it replaces (one plain loop per figure over the whole signal),
// fed in random chunk sizes: single samples, and chunks that split windows and Welch segments.
import { describe, expect, it } from 'vitest';
import { describe as describeMoments } from '../stages/dsp/moments.js';
import { median } from '../stages/dsp/median.js';
import { Welch } from '../stages/dsp/welch.js';
import { makeWindow } from '../stages/dsp/window.js';
import { expAverageOf } from '../stages/fused/exp-average.js';
import { finiteWindowsOf } from '../stages/fused/finite-windows.js';
import { fixedWindowsOf } from '../stages/fused/fixed-windows.js';
import { histogramOf } from '../stages/fused/histogram.js';
import { limitRunsOf } from '../stages/fused/limit-runs.js';
import { missingOf } from '../stages/fused/missing.js';
import { momentsOf } from '../stages/fused/moments.js';
import { kernelSignature, kernelSource } from '../stages/fused/pass.js';
import type { Accumulator } from '../stages/fused/accumulator.js';
import { repeatRunsOf } from '../stages/fused/repeat-runs.js';
import { robustOutliersOf } from '../stages/fused/robust-outliers.js';
import { runningMeanSquareOf } from '../stages/fused/running-mean-square.js';
import { zeroRunsOf } from '../stages/fused/zero-runs.js';
import type { ChannelContext, Stage } from '../stages/stage.js';
import { uniform } from './dsp-signals.js';

const FS = 1000, LO = -2, HI = 2;

/** A signal with everything the accumulators look for: noise and a tone, clipped stretches, zeros, repeats, gaps, spikes, an offset. */
function awkwardSignal(n: number, seed: number): Float64Array {
  const u = uniform(seed);
  const x = Float64Array.from({ length: n }, (_, i) => 0.3 + Math.sin((2 * Math.PI * 37 * i) / FS) + 0.5 * (u() - 0.5));
  for (let i = 2000; i < 2050; i++) x[i] = HI;            // clipped
  for (let i = 5000; i < 5003; i++) x[i] = LO;
  for (let i = 8000; i < 8400; i++) x[i] = 0;             // a dropout of zeros
  for (let i = 11000; i < 12500; i++) x[i] = 0.7;         // stuck
  for (const i of [3001, 3002, 9999, 20000, 20001, 27000]) x[i] = NaN;
  x[25000] = Infinity;
  for (const i of [14000, 17003, 17005, 22222]) x[i] += 40; // spikes, two of them close together
  return x;
}

/** Random chunk sizes: runs of single samples, and sizes that split 1000-sample windows and 256-sample Welch segments. */
function chunkSizes(n: number, seed: number): number[] {
  const u = uniform(seed), sizes: number[] = [];
  for (let at = 0; at < n;) {
    // Single samples at the start and across a window end (1000) and a segment end (2048).
    const r = at < 20 || (at >= 990 && at < 1010) || (at >= 2040 && at < 2060) ? 0 : u();
    const size = r < 0.15 ? 1 : r < 0.3 ? 1 + Math.floor(u() * 7) : r < 0.6 ? 1 + Math.floor(u() * 1500) : 2048 + Math.floor(u() * 9000);
    const s = Math.min(size, n - at);
    sizes.push(s);
    at += s;
  }
  return sizes;
}

function context(): { ctx: ChannelContext; shared: Map<string, Stage> } {
  const shared = new Map<string, Stage>();
  const ctx: ChannelContext = {
    name: 'x', quantity: 'acceleration', unit: 'u', sampleRate: FS, range: [LO, HI], bits: null, maxFrequencyHz: null, stepSize: null, fullScale: null,
    declared: true, declaredDurationS: null, timeSteps: () => null, note: () => {}, addRow: () => {}, flag: () => {}, evidence: () => {},
    shared: <T extends Stage>(k: string, make: () => T) => (shared.get(k) ?? shared.set(k, make()).get(k)) as T,
  };
  return { ctx, shared };
}

// The former straightforward formulas, one loop each over the whole signal.
function plainMoments(x: Float64Array) {
  const f = Array.from(x).filter(Number.isFinite);
  const mean = f.reduce((a, b) => a + b, 0) / f.length;
  const m = (p: number) => f.reduce((a, b) => a + (b - mean) ** p, 0);
  return { ...describeMoments({ n: f.length, mean, m2: m(2), m3: m(3), m4: m(4), min: Math.min(...f), max: Math.max(...f), nonFinite: x.length - f.length }), nonFinite: x.length - f.length };
}
function plainRuns(x: Float64Array, hit: (v: number, prev: number) => boolean) {
  let run = 0, longest = 0, end = 0, count = 0, first = -1, prev = NaN;
  for (let i = 0; i < x.length; i++) {
    if (hit(x[i], prev)) { count++; if (first < 0) first = i; if (++run > longest) { longest = run; end = i; } } else run = 0;
    prev = x[i];
  }
  return { count, first, longest, end };
}

describe('the fused pass equals the straightforward formulas, whatever the chunking', () => {
  for (const seed of [1, 2, 3]) {
    it(`signal and chunking ${seed}`, () => {
      const x = awkwardSignal(30_000, seed);
      const sizes = chunkSizes(x.length, 100 + seed);
      expect(sizes.filter((s) => s === 1).length).toBeGreaterThan(10);
      const { ctx, shared } = context();
      const moments = momentsOf(ctx), limits = limitRunsOf(ctx, LO, HI), repeats = repeatRunsOf(ctx, 0.01), zeros = zeroRunsOf(ctx), missing = missingOf(ctx);
      const means: number[] = [], trend: number[] = [], rows: number[][] = [];
      finiteWindowsOf(ctx, 1000).listen((sum, _, n) => means.push(sum / n));
      finiteWindowsOf(ctx, 100).listen((_, sq, n) => trend.push(Math.sqrt(sq / n)));
      fixedWindowsOf(ctx, 1000).listen((sum, sq, peak, end) => rows.push([end, sum, sq, peak]));
      const hist = histogramOf(ctx, [-3, 3], 120), reservoir = histogramOf(ctx, null, 120);
      // Squares of missing samples would spoil the running figures for good: those two see the signal with gaps filled.
      const clean = x.map((v) => (Number.isFinite(v) ? v : 0));
      const filled = context();
      const slow = expAverageOf(filled.ctx, 1 - Math.exp(-1 / (0.125 * FS)));
      const mtvv = runningMeanSquareOf(filled.ctx, 1000);
      const outliers: number[] = [];
      robustOutliersOf(ctx, 10, 0, (n) => outliers.push(n));
      for (let at = 0, k = 0; k < sizes.length; at += sizes[k++]) {
        const chunk = x.subarray(at, at + sizes[k]);
        for (const p of shared.values()) p.push(chunk);
        for (const p of filled.shared.values()) p.push(clean.subarray(at, at + sizes[k]));
      }

      // Moments: a two-pass computation over all finite samples.
      const got = describeMoments(moments.moments()), want = plainMoments(x);
      for (const k of ['mean', 'std', 'rms', 'skewness', 'kurtosis'] as const) expect(Math.abs(got[k]! - want[k]!) / Math.abs(want[k]!)).toBeLessThan(1e-10);
      expect([got.min, got.max, moments.moments().nonFinite]).toEqual([want.min, want.max, want.nonFinite]);

      // Runs: at or beyond the limits, repeats, zeros; missing samples.
      const sat = plainRuns(x, (v) => v >= HI || v <= LO);
      expect([limits.count, limits.first, limits.longest, limits.longestEnd]).toEqual([sat.count, sat.first, sat.longest, sat.end]);
      const rep = plainRuns(x, (v, p) => v === p);
      expect([repeats.longest, repeats.longestEnd]).toEqual([rep.longest, rep.end]);
      // Samples in stretches of more than 10 repeats (0.01 s at 1 kHz) of a value other than zero: the clipped and stuck ones.
      let stuck = 0;
      for (let i = 0; i < x.length;) {
        let j = i + 1;
        while (j < x.length && x[j] === x[i]) j++;
        if (j - i - 1 >= 10 && x[i] !== 0) stuck += j - i;
        i = j;
      }
      expect(stuck).toBe(50 + 1500);
      expect(repeats.stuck).toBe(stuck);
      const zer = plainRuns(x, (v) => v === 0);
      expect([zeros.longest, zeros.longestEnd]).toEqual([zer.longest, zer.end]);
      const gaps = plainRuns(x, (v) => !Number.isFinite(v));
      expect([missing.count, missing.first]).toEqual([gaps.count, gaps.first]);

      // Windows of finite samples (offset means, RMS trend) and back-to-back windows in time of their finite samples (windows.parquet).
      const finite = Array.from(x).filter(Number.isFinite);
      const plainMeans = [], plainTrend = [];
      for (let i = 0; i + 1000 <= finite.length; i += 1000) plainMeans.push(finite.slice(i, i + 1000).reduce((a, b) => a + b, 0) / 1000);
      for (let i = 0; i + 100 <= finite.length; i += 100) plainTrend.push(Math.sqrt(finite.slice(i, i + 100).reduce((a, b) => a + b * b, 0) / 100));
      expect(means).toEqual(plainMeans);
      expect(trend).toEqual(plainTrend);
      const plainRows = [];
      for (let i = 0; i + 1000 <= x.length; i += 1000) {
        const w = Array.from(x.subarray(i, i + 1000)).filter(Number.isFinite);
        plainRows.push([i + 1000, w.reduce((a, b) => a + b, 0), w.reduce((a, b) => a + b * b, 0), w.reduce((a, b) => (Math.abs(b) > a ? Math.abs(b) : a), 0)]);
      }
      expect(rows).toEqual(plainRows);

      // Histogram over fixed limits; without limits, an even sample by reservoir sampling (Vitter's algorithm R, same generator).
      const counts = new Float64Array(120);
      for (const v of finite) counts[Math.min(119, Math.max(0, Math.floor((v + 3) * (120 / 6))))]++;
      expect(Array.from(hist.counts)).toEqual(Array.from(counts));
      const kept: number[] = [];
      let seed2 = 0x9e3779b9;
      finite.forEach((v, i) => {
        if (kept.length < 8192) kept.push(v);
        else { seed2 = (Math.imul(seed2, 1664525) + 1013904223) >>> 0; const j = seed2 % (i + 1); if (j < 8192) kept[j] = v; }
      });
      expect(Array.from(reservoir.sample)).toEqual(kept);

      // Exponential average and running mean square, by their definitions.
      const a = 1 - Math.exp(-1 / (0.125 * FS));
      let y = 0, ymax = 0;
      for (const v of clean) { y += a * (v * v - y); if (y > ymax) ymax = y; }
      expect(slow.max).toBe(ymax);
      let best = -Infinity;
      for (let end = 1000; end <= clean.length; end++) {
        let sq = 0;
        for (let i = end - 1000; i < end; i++) sq += clean[i] * clean[i];
        if (sq > best) best = sq;
      }
      expect(Math.abs(mtvv.max - best) / best).toBeLessThan(1e-9);

      // Outliers: each chunk's median and MAD of every 8th finite sample, then every sample beyond 10 robust sigmas.
      const plainOut: number[] = [];
      for (let at = 0, k = 0; k < sizes.length; at += sizes[k++]) {
        const c = x.subarray(at, at + sizes[k]);
        const sub = Float64Array.from(Array.from({ length: Math.ceil(c.length / 8) }, (_, j) => c[8 * j]).filter(Number.isFinite));
        if (sub.length < 16) continue;
        const med = median(sub.slice()), mad = median(sub.map((v) => Math.abs(v - med)));
        const limit = 10 * Math.max(1.4826 * mad, 0, 1e-300);
        c.forEach((v, i) => { if (Math.abs(v - med) > limit) plainOut.push(at + i); });
      }
      expect(outliers).toEqual(plainOut);
      expect(outliers.length).toBeGreaterThan(0);

      // Welch's segments cross chunk boundaries: the same density as the whole signal at once, and as plain DFTs of each segment.
      const whole = new Welch(FS, { segment: 256, overlap: 0.5, window: 'hann' });
      const w2 = new Welch(FS, { segment: 256, overlap: 0.5, window: 'hann' });
      for (let at = 0, k = 0; k < sizes.length; at += sizes[k++]) w2.push(clean.subarray(at, at + sizes[k]));
      whole.push(clean);
      expect(Array.from(w2.result()!.density)).toEqual(Array.from(whole.result()!.density));
      const win = makeWindow('hann', 256), s2 = win.reduce((a2, b) => a2 + b * b, 0);
      const plain = new Float64Array(129);
      let segments = 0;
      for (let at = 0; at + 256 <= clean.length; at += 128, segments++) {
        const seg = clean.subarray(at, at + 256), mean = seg.reduce((a2, b) => a2 + b, 0) / 256;
        for (let k = 0; k <= 128; k++) {
          let re = 0, im = 0;
          for (let i = 0; i < 256; i++) { const v = (seg[i] - mean) * win[i]; re += v * Math.cos((2 * Math.PI * k * i) / 256); im -= v * Math.sin((2 * Math.PI * k * i) / 256); }
          plain[k] += re * re + im * im;
        }
      }
      const density = w2.result()!.density, peak = Math.max(...density);
      for (let k = 0; k <= 128; k++) {
        const want2 = (plain[k] / (FS * s2 * segments)) * (k === 0 || k === 128 ? 1 : 2);
        expect(Math.abs(density[k] - want2) / peak).toBeLessThan(1e-12);
      }
    });
  }

  // Held stretches of at least 10 repeats (0.01 s at 1 kHz) ended by a jump of more than two steps of the data, against a
  // plain loop: a slow ramp on a 0.01 grid leaves each of its 20-sample stretches by one step; stretches planted in noise on
  // the same grid end with jumps of many steps; one ends at a missing sample, one at a zero, one is still open at the end.
  for (const seed of [4, 5]) {
    it(`held stretches and the jumps that end them, chunking ${seed}`, () => {
      const u = uniform(seed), grid = 0.01;
      const x = Float64Array.from({ length: 12_000 }, (_, i) => Math.round((i < 4000 ? 1 + Math.floor(i / 20) * grid : 3 * (u() - 0.5)) / grid) * grid);
      const plant = (at: number, len: number) => x.fill(x[at - 1], at, at + len);
      for (const at of [4500, 5100, 6003, 7777]) plant(at, 15 + (at % 7));
      plant(8200, 60);                        // the longest, ended by a jump
      plant(9000, 30); x[9030] = NaN;         // ended by a missing sample
      plant(9500, 12); x[9512] = 0;           // ended by a zero
      plant(11_980, 20);                      // open at the end
      const { ctx, shared } = context();
      const runs = repeatRunsOf(ctx, 0.01);
      const sizes = chunkSizes(x.length, 200 + seed);
      for (let at = 0, k = 0; k < sizes.length; at += sizes[k++]) for (const p of shared.values()) p.push(x.subarray(at, at + sizes[k]));
      // The smallest change, one step of the grid, lies in the first samples: every chunking knows it before a stretch ends.
      expect(runs.dataStep).toBeCloseTo(grid, 12);
      let held = 0, holds = 0, jumps = 0;
      for (let i = 0; i < x.length;) {
        let j = i + 1;
        while (j < x.length && x[j] === x[i]) j++;
        const jump = j < x.length ? Math.abs(x[j] - x[i]) : NaN;
        if (j - i - 1 >= 10 && x[i] !== 0 && jump > 2 * runs.dataStep!) { held += j - i; holds++; jumps += jump; }
        i = j;
      }
      expect(holds).toBe(7);
      expect(runs.held).toBe(held);
      expect(runs.holds).toBe(holds);
      expect(runs.jumps).toBeCloseTo(jumps, 12);
      expect(runs.longestJump).toBeCloseTo(Math.abs(x[8260] - x[8259]), 12);
    });
  }

  it('finds every outlier of a chunk that holds more of them than the pass keeps', () => {
    const u = uniform(9);
    const x = Float64Array.from({ length: 70_000 }, (_, i) => u() - 0.5 + (i % 20 === 7 ? 100 : 0));
    const { ctx, shared } = context();
    const outliers: number[] = [];
    robustOutliersOf(ctx, 10, 0, (n) => outliers.push(n));
    for (const p of shared.values()) { p.push(x.subarray(0, 65536)); p.push(x.subarray(65536)); }
    const plainOut: number[] = [];
    for (const [at, c] of [[0, x.subarray(0, 65536)], [65536, x.subarray(65536)]] as const) {
      const sub = Float64Array.from(Array.from({ length: Math.ceil(c.length / 8) }, (_, j) => c[8 * j]));
      const med = median(sub.slice()), limit = 10 * Math.max(1.4826 * median(sub.map((v) => Math.abs(v - med))), 1e-300);
      c.forEach((v, i) => { if (Math.abs(v - med) > limit) plainOut.push(at + i); });
    }
    expect(plainOut.length).toBeGreaterThan(3000);
    expect(outliers).toEqual(plainOut);
  });

  it('compiles every accumulator of a channel into one loop, and refuses an undeclared name', () => {
    const { ctx, shared } = context();
    momentsOf(ctx); limitRunsOf(ctx, LO, HI); zeroRunsOf(ctx);
    const pass = shared.get('fused-pass') as unknown as { accs: unknown[] };
    const body = kernelSource(pass.accs as never);
    expect(body.match(/for \(/g)?.length).toBe(1);
    expect(() => kernelSource([{ key: 'bad', names: [], state: new Float64Array(0), each: '$nope++;' }])).toThrow(/\$nope is not declared/);
  });

  it('finds a kernel by a signature that is equal exactly when the kernel sources are', () => {
    const sets = [
      (c: ChannelContext) => { momentsOf(c); limitRunsOf(c, LO, HI); zeroRunsOf(c); },
      (c: ChannelContext) => { zeroRunsOf(c); momentsOf(c); limitRunsOf(c, LO, HI); },
      (c: ChannelContext) => { momentsOf(c); limitRunsOf(c, -1, 1); zeroRunsOf(c); },
      (c: ChannelContext) => { momentsOf(c); zeroRunsOf(c); },
    ];
    const made = sets.map((declare) => {
      const { ctx, shared } = context();
      declare(ctx);
      const accs = (shared.get('fused-pass') as unknown as { accs: Accumulator[] }).accs;
      return { signature: kernelSignature(accs), source: kernelSource(accs) };
    });
    for (const a of made) for (const b of made) expect(a.signature === b.signature).toBe(a.source === b.source);
    expect(new Set(made.map((m) => m.source)).size).toBeGreaterThan(2);
  });
});
