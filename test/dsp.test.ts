// Filters, spectra and envelopes against scipy.signal 1.10.1 (vectors made by test/fixtures/make-dsp-vectors.py) and textbook facts.
import { describe, expect, it } from 'vitest';
import { butterworthSos, magnitude, type FilterSpec } from '../stages/dsp/butterworth.js';
import { ZeroPhaseFilter } from '../stages/dsp/filtfilt.js';
import { StreamingEnvelope } from '../stages/dsp/hilbert.js';
import { SosFilter } from '../stages/dsp/sosfilt.js';
import { RealFft } from '../stages/dsp/fft.js';
import { periodogramAdd, realDft } from '../stages/dsp/fft-simd.js';
import { bandMeanSquare, Welch } from '../stages/dsp/welch.js';
import { makeWindow } from '../stages/dsp/window.js';
import { amSignal, inChunks, maxAbsDiff, testSignal } from './dsp-signals.js';
import { fixture, readJson } from './helpers.js';

const ref = readJson(fixture('dsp-vectors.json'));
const stride = <T>(xs: ArrayLike<T>, s: number) => Array.from({ length: Math.ceil(xs.length / s) }, (_, i) => xs[i * s]);
const label = (f: any): string => `${f.kind} order ${f.order} ${f.cutoff_hz ?? `${f.low_hz}–${f.high_hz}`} Hz at ${f.fs} Hz`;

const filterCases: [string, any][] = ref.filters.map((f: any) => [label(f), f]);
const welchCases: [string, any][] = ref.welch.map((w: any) => [`${w.window}, ${w.nperseg} samples, ${w.overlap * 100} % overlap`, w]);

describe('Butterworth design against scipy.signal.butter(..., output="sos")', () => {
  it.each(filterCases)('%s: same magnitude response', (_, f: any) => {
    const sos = butterworthSos(f as FilterSpec, f.fs);
    expect(sos.length).toBe(f.sos.length);
    const ours = f.freqs.map((fr: number) => magnitude(sos, fr, f.fs));
    // Relative to the passband gain of 1; deep stopband values compared absolutely.
    expect(maxAbsDiff(ours, f.magnitude)).toBeLessThan(1e-9);
  });

  it.each(filterCases)('%s: causal output equals scipy.signal.sosfilt', (_, f: any) => {
    const x = testSignal(ref.n, f.fs);
    const filter = new SosFilter(butterworthSos(f as FilterSpec, f.fs));
    const y = new Float64Array(x.length);
    let at = 0;
    inChunks(x, (c) => { filter.process(c, y.subarray(at, at + c.length)); at += c.length; });
    expect(maxAbsDiff(stride(y, ref.stride), f.sosfilt)).toBeLessThan(1e-9);
  });

  it.each(filterCases)('%s: streamed zero-phase output equals scipy.signal.sosfiltfilt', (_, f: any) => {
    const x = testSignal(ref.n, f.fs);
    const parts: number[] = [];
    const zp = new ZeroPhaseFilter(butterworthSos(f as FilterSpec, f.fs), (y) => { for (const v of y) parts.push(v); });
    inChunks(x, (c) => zp.push(c));
    expect(zp.finish()).toBe(true);
    expect(parts.length).toBe(x.length);
    expect(maxAbsDiff(stride(parts, ref.stride), f.sosfiltfilt)).toBeLessThan(1e-9);
  });

  it('has |H| = 1/√2 (−3.01 dB) at the cut-off and rolls off at 20·N dB per decade (textbook Butterworth properties)', () => {
    for (const order of [1, 2, 4, 7]) {
      const fs = 100_000;
      const sos = butterworthSos({ kind: 'lowpass', order, cutoff_hz: 100 }, fs);
      expect(20 * Math.log10(magnitude(sos, 100, fs))).toBeCloseTo(-3.0103, 3);
      // Between 1 and 2 kHz, far above the cut-off yet far below Nyquist, where warping is negligible.
      const slope = 20 * Math.log10(magnitude(sos, 2000, fs) / magnitude(sos, 1000, fs)) / Math.log10(2);
      expect(slope).toBeCloseTo(-20 * order, 0);
    }
  });
});

describe("Welch's method against scipy.signal.welch", () => {
  it('the WebAssembly real transform and periodogram equal the readable TypeScript ones (stages/dsp/fft.ts) bit for bit', () => {
    for (let lg = 2; lg <= 14; lg++) {
      const n = 1 << lg, x = testSignal(n, 25600).map((v, i) => v * 1e3 + (i % 7) * 0.001), win = makeWindow('hann', n);
      const ts = new RealFft(n), re = new Float64Array(n / 2 + 1), im = re.slice(), wre = re.slice(), wim = re.slice();
      ts.forward(x, re, im);
      realDft(x, wre, wim);
      expect([wre, wim], `n = ${n}`).toEqual([re, im]);
      let mean = 0;
      for (let i = 0; i < n; i++) mean += x[i];
      ts.forwardWindowed(x, mean / n, win, re, im);
      const want = re.map((r, k) => 0.5 + (r * r + im[k] * im[k])), got = new Float64Array(n / 2 + 1).fill(0.5);
      periodogramAdd(x, win, 'hann', got);
      expect(got, `n = ${n}`).toEqual(want);
    }
  });

  it('adds, whatever the chunking, exactly the periodograms of its segments taken one at a time (the same numbers, bit for bit)', () => {
    for (const [segment, overlap, n] of [[16, 0, 5000], [64, 0.95, 3000], [1024, 0.5, 70_000], [4096, 0.5, 150_000], [256, 0.25, 999]] as const) {
      const x = testSignal(n, 25600);
      const win = makeWindow('hann', segment), hop = Math.max(1, segment - Math.floor(segment * overlap));
      const sum = new Float64Array(segment / 2 + 1);
      let segments = 0;
      for (let s = 0; s + segment <= n; s += hop, segments++) periodogramAdd(x.slice(s, s + segment), win, 'hann', sum);
      for (const sizes of [[65536], [1, 7, 4096, 333], [segment - 1, segment + 1]]) {
        const welch = new Welch(25600, { segment, overlap, window: 'hann' });
        inChunks(x, (c) => welch.push(c), sizes);
        const psd = welch.result()!;
        expect(psd.segments, `${segment}, ${overlap}, chunks ${sizes}`).toBe(segments);
        // Density scaling 1/(fs·Σw²·segments), interior bins doubled, as welch.ts writes it.
        let s2 = 0;
        for (let i = 0; i < segment; i++) s2 += win[i] * win[i];
        const scale = 1 / (25600 * s2 * segments);
        expect(psd.density, `${segment}, ${overlap}, chunks ${sizes}`).toEqual(sum.map((v, k) => v * scale * (k === 0 || k === segment / 2 ? 1 : 2)));
      }
    }
  });

  it.each(welchCases)('%s', (_, w: any) => {
    const x = testSignal(ref.n, w.fs);
    const welch = new Welch(w.fs, { segment: w.nperseg, overlap: w.overlap, window: w.window });
    inChunks(x, (c) => welch.push(c));
    const psd = welch.result()!;
    const peak = Math.max(...w.density);
    expect(maxAbsDiff(psd.density, w.density) / peak).toBeLessThan(1e-10);
  });

  it('integrates to the variance (Parseval) within 1 % for noise and for tones', () => {
    let seed = 99;
    const rnd = () => ((seed = (seed * 1103515245 + 12345) & 0x7fffffff) / 0x7fffffff) - 0.5;
    const fs = 10_000;
    for (const x of [Float64Array.from({ length: 200_000 }, rnd), Float64Array.from({ length: 200_000 }, (_, i) => 2 * Math.sin(2 * Math.PI * 1234.5 * i / fs) + Math.cos(2 * Math.PI * 300 * i / fs))]) {
      const welch = new Welch(fs, { segment: 4096, overlap: 0.5, window: 'hann' });
      welch.push(x);
      const psd = welch.result()!;
      const mean = x.reduce((a, b) => a + b, 0) / x.length;
      const variance = x.reduce((a, b) => a + (b - mean) ** 2, 0) / x.length;
      expect(Math.abs(bandMeanSquare(psd, 0, fs / 2) / variance - 1)).toBeLessThan(0.01);
    }
  });

  it('white noise of variance σ² has a one-sided density σ²/(fs/2); a tone of amplitude A has band RMS A/√2', () => {
    let seed = 5;
    const rnd = () => ((seed = (seed * 1103515245 + 12345) & 0x7fffffff) / 0x7fffffff) - 0.5; // uniform, variance 1/12
    const fs = 8000;
    const noise = Float64Array.from({ length: 400_000 }, rnd);
    const welch2 = new Welch(fs, { segment: 1024, overlap: 0.5, window: 'hann' });
    welch2.push(noise);
    const mean = noise.reduce((a, b) => a + b, 0) / noise.length;
    const variance = noise.reduce((a, b) => a + (b - mean) ** 2, 0) / noise.length;
    const interior = welch2.result()!.density.slice(10, -10);
    const meanDensity = interior.reduce((a, b) => a + b, 0) / interior.length;
    expect(Math.abs(meanDensity / (variance / (fs / 2)) - 1)).toBeLessThan(0.01);
    const tone = new Welch(fs, { segment: 1024, overlap: 0.5, window: 'hann' });
    tone.push(Float64Array.from({ length: 80_000 }, (_, i) => 3 * Math.sin(2 * Math.PI * 1000 * i / fs)));
    expect(Math.sqrt(bandMeanSquare(tone.result()!, 900, 1100)) / (3 / Math.SQRT2)).toBeCloseTo(1, 4);
  });
});

describe('envelope by the analytic signal', () => {
  it('equals scipy.signal.hilbert away from the ends, whatever the block edges', () => {
    const x = amSignal(ref.n, ref.hilbert.fs);
    const env: number[] = [];
    const h = new StreamingEnvelope((e) => { for (const v of e) env.push(v); }, 4096, 1024);
    inChunks(x, (c) => h.push(c));
    h.finish();
    expect(env.length).toBe(x.length);
    const ours = stride(env, ref.stride);
    // scipy transforms the whole record at once, whose circular ends differ from a stream's: compare the middle 90 %.
    // Both lie within 2e-6 of the exact envelope there (checked below), so they agree to 1e-5 of its size.
    const lo = Math.floor(ours.length * 0.05), hi = Math.floor(ours.length * 0.95);
    expect(maxAbsDiff(ours.slice(lo, hi), ref.hilbert.envelope.slice(lo, hi))).toBeLessThan(1e-5);
  });

  it('of (1 + m·cos ωm t)·cos ωc t is 1 + m·cos ωm t (textbook amplitude modulation)', () => {
    const fs = 12800, n = 60_000;
    const x = amSignal(n, fs);
    const env: number[] = [];
    const h = new StreamingEnvelope((e) => { for (const v of e) env.push(v); });
    h.push(x);
    h.finish();
    const expected = Array.from({ length: n }, (_, i) => 1 + 0.5 * Math.cos(2 * Math.PI * 37 * i / fs));
    // A record's abrupt ends disturb the analytic signal with an error falling as 1/distance; 6000 samples in, it is below 1e-4.
    expect(maxAbsDiff(env.slice(6000, n - 6000), expected.slice(6000, n - 6000))).toBeLessThan(1e-4);
    // The envelope spectrum peaks at the modulation frequency.
    const w = new Welch(fs, { segment: 16384, overlap: 0.5, window: 'hann' });
    w.push(Float64Array.from(env));
    const psd = w.result()!;
    let k = 1;
    for (let i = 1; i < psd.density.length; i++) if (psd.density[i] > psd.density[k]) k = i;
    expect(Math.abs(k * psd.df - 37)).toBeLessThanOrEqual(psd.df);
  });
});
