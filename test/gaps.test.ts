// Missing samples and short recordings against numpy and scipy 1.10 (vectors made by test/fixtures/make-gap-vectors.py):
// every figure is of the finite samples, and a recording shorter than one Welch segment is one periodogram of its whole length.
import { describe, expect, it } from 'vitest';
import { bandMeanSquare, Welch, type Psd } from '../stages/dsp/welch.js';
import type { Flag } from '../stages/quality/flag.js';
import { countMissing, inChunks, maxRelative, relative } from './dsp-signals.js';
import { fixture, readJson } from './helpers.js';
import { channel, reduce } from './reduce-signal.js';

const ref = readJson(fixture('gap-vectors.json'));
const SCALE = channel().scale;
const f32 = (v: number) => Math.fround(v / SCALE) * SCALE;

/** As gap_signal in make-gap-vectors.py: two tones and a burst, 20 missing samples at 3001 + 5003·k (`fill` for each). */
function gapSignal(n: number, fs: number, fill: (k: number) => number = () => NaN): Float64Array {
  const x = Float64Array.from({ length: n }, (_, i) => {
    const t = i / fs;
    return f32(30 * Math.sin(2 * Math.PI * 162.5 * t) + 5 * Math.sin(2 * Math.PI * 1234 * t + 0.3) + 20 * Math.exp(-(((t - 2) / 0.05) ** 2)) * Math.sin(2 * Math.PI * 400 * t));
  });
  for (let k = 0; k < 20; k++) x[3001 + 5003 * k] = fill(k);
  return x;
}

/** As late_tone in make-gap-vectors.py: a unit 100 Hz tone from 0.17 s. */
const lateTone = (n: number, fs: number) => Float64Array.from({ length: n }, (_, i) => (i / fs >= 0.17 ? f32(Math.sin(2 * Math.PI * 100 * (i / fs - 0.17))) : 0));

const asPsd = (density: number[], fs: number, segment: number): Psd => ({ density: Float64Array.from(density), df: fs / segment, segments: 1, segment, length: segment });

const FULL = { statistics: {}, spectrum: {}, bands: [[20, 200]], time_weighting_s: [0.125, 1], mtvv: { integration_s: 1 }, windows: { length_s: 0.5 } } as never;

describe('missing samples: every figure is of the finite samples', () => {
  const g = ref.gaps;

  it('Welch takes only the segments free of missing samples: scipy.signal.welch over each gap-free stretch', () => {
    for (const sizes of [[65536], [8191], [1, 5000, 3, 777]]) {
      const welch = new Welch(g.fs, { segment: g.segment, overlap: 0.5, window: 'hann' });
      inChunks(gapSignal(g.n, g.fs), (c) => welch.push(c, countMissing(c)), sizes);
      const psd = welch.result()!;
      expect(psd.segments).toBe(g.segments);
      expect(maxRelative(psd.density, g.density)).toBeLessThan(1e-10);
    }
  });

  it('with NaN or ±Inf alike, the reduced figures are numpy\'s and scipy\'s over the finite samples', async () => {
    for (const fill of [() => NaN, (k: number) => (k % 2 ? Infinity : -Infinity)]) {
      const { row, result } = await reduce(gapSignal(g.n, g.fs, fill), g.fs, FULL);
      expect(row.dominant_frequency).toBe(g.dominant_frequency);
      expect(relative(row.spectral_centroid, g.spectral_centroid)).toBeLessThan(1e-9);
      expect(relative(row.band_20_200_rms, Math.sqrt(bandMeanSquare(asPsd(g.density, g.fs, g.segment), 20, 200)))).toBeLessThan(1e-9);
      // scipy.signal.lfilter of the squared finite samples; the running 1 s mean square by numpy's cumsum.
      expect(relative(row.max_twrms_125ms, g.max_twrms_125ms)).toBeLessThan(1e-9);
      expect(relative(row.max_twrms_1000ms, g.max_twrms_1000ms)).toBeLessThan(1e-9);
      expect(relative(row.mtvv, g.mtvv)).toBeLessThan(1e-9);
      expect(relative(row.rms, g.rms)).toBeLessThan(1e-12);
      // Each 0.5 s window by numpy over its finite samples.
      const rows = result.tables.windows;
      expect(rows.length).toBe(g.windows.length);
      rows.forEach((r, i) => [r.mean, r.rms, r.peak].forEach((v, j) => expect(Math.abs((v as number) - g.windows[i][j])).toBeLessThan(1e-9 * g.rms)));
      const dropout = result.quality[0].flags.find((f) => f.name === 'dropout') as Flag;
      expect(dropout.severity).toBe('note');
      expect(dropout.message).toMatch(/^20 samples missing \(.*\), first at .*, the longest gap /);
      expect(dropout.message).toMatch(/figures are of the finite samples/);
      expect(result.messages.join('\n')).toMatch(/spectrum from the 20 segments of 4096 samples free of missing samples/);
    }
  });

  it('windows that overlap take their finite samples too, and a window with none reads null', async () => {
    const fs = 1000, x = Float64Array.from({ length: 3000 }, (_, i) => (i < 900 ? 1 : -2));
    x.fill(NaN, 1000, 1500);
    x[200] = Infinity;
    const { result } = await reduce(x, fs, { windows: { length_s: 0.5, hop_s: 0.25 } } as never, channel({ scale: 1 }));
    const rows = result.tables.windows.map((r) => [r.window_start_s, r.mean, r.rms, r.peak]);
    // Derived by hand: [0, 0.5) holds 499 ones; [0.75, 1.25) 150 ones and 100 of −2; [1, 1.5) nothing finite; [1.25, 1.75) 250 of −2.
    expect(rows[0]).toEqual([0, 1, 1, 1]);
    expect(rows[3][0]).toBe(0.75);
    expect(rows[3][1]).toBeCloseTo(-0.2, 12);
    expect(rows[3][2]).toBeCloseTo(Math.sqrt(2.2), 12);
    expect(rows[3][3]).toBe(2);
    expect(rows[4]).toEqual([1, null, null, null]);
    expect(rows[5]).toEqual([1.25, -2, 2, 2]);
  });

  it('the envelope of an amplitude-modulated carrier with gaps is 1 + m·cos ωm t away from them (mean 1, peak 1 + m; textbook AM)', async () => {
    const fs = 12800, n = fs * 20, fc = 3500, fm = 23, m = 0.5;
    const x = Float64Array.from({ length: n }, (_, i) => (1 + m * Math.cos(2 * Math.PI * fm * i / fs)) * Math.cos(2 * Math.PI * fc * i / fs));
    for (let k = 1; k < 12; k++) x.fill(NaN, k * 20000, k * 20000 + 1 + 50 * k);
    const { row, result } = await reduce(x, fs, { spectrum: { segment: 16384 }, envelope: { filter: { kind: 'bandpass', order: 4, low_hz: 2500, high_hz: 4500 } } } as never);
    expect(row.env_mean).toBeCloseTo(1, 2);
    expect(row.env_peak).toBeCloseTo(1 + m, 2);
    expect(row.env_rms).toBeCloseTo(Math.sqrt(1 + m * m / 2), 2);
    expect(Math.abs(row.env_dominant_frequency - fm)).toBeLessThanOrEqual(fs / 16384);
    expect(row.filtered_rms / Math.sqrt((1 + m * m / 2) / 2)).toBeCloseTo(1, 2);
    expect(result.quality[0].flags.find((f) => f.name === 'dropout')!.severity).toBe('fail');
  });

  it('the longest gap warns from the F time constant (0.125 s) and fails from MTVV\'s 1 s, whatever the share missing', async () => {
    const fs = 1000, quality = { dropout: { warn_missing_fraction: 0.5, fail_missing_fraction: 0.9 } };
    const gap = async (length: number) => {
      const x = Float64Array.from({ length: 20000 }, (_, i) => Math.sin(i / 7));
      x.fill(NaN, 5000, 5000 + length);
      const { result } = await reduce(x, fs, { quality } as never);
      return result.quality[0].flags.find((f) => f.name === 'dropout') as Flag;
    };
    expect((await gap(124)).severity).toBe('note');
    const warn = await gap(125);
    expect(warn.severity).toBe('warn');
    expect(warn.message).toMatch(/the longest gap 0\.125 s ending at 5\.125 s/);
    expect((await gap(1000)).severity).toBe('fail');
  });

  it('no gap-free segment: the spectrum of the longest gap-free stretch; no stretch of 8 samples: null, and says why', async () => {
    const x = Float64Array.from({ length: 40000 }, (_, i) => Math.sin(i / 7));
    for (let i = 0; i < x.length; i += 3000) x[i] = NaN;
    const stretch = await reduce(x, 25600, { spectrum: {}, bands: [[20, 200]] } as never);
    // sin(i/7) is a tone at fs/(14π) = 582 Hz: the bin nearest it, 6.25 Hz apart (resolution fs/2999 = 8.5 Hz).
    expect(Math.abs(stretch.row.dominant_frequency - 25600 / (14 * Math.PI))).toBeLessThan(6.25);
    expect(stretch.result.messages.join('\n')).toMatch(/spectrum from the longest gap-free stretch, 2999 samples from /);
    for (let i = 0; i < x.length; i += 5) x[i] = NaN;
    const { row, result } = await reduce(x, 25600, { spectrum: {}, bands: [[20, 200]] } as never);
    expect(row.dominant_frequency).toBeNull();
    expect(row.band_20_200_rms).toBeNull();
    expect(result.messages.join('\n')).toMatch(/no stretch of 8 samples free of missing samples; spectral figures left empty/);
  });
});

describe('a recording shorter than one Welch segment', () => {
  const s = ref.short;

  it('is one periodogram of its whole length, zero-padded to the segment: scipy.signal.welch(x, nperseg=len(x), nfft=segment)', () => {
    const welch = new Welch(s.fs, { segment: s.segment, overlap: 0.5, window: 'hann' });
    inChunks(lateTone(s.n, s.fs), (c) => welch.push(c), [1000, 3, 2997]);
    const psd = welch.result()!;
    expect(psd.df).toBe(s.df);
    expect([psd.segment, psd.length]).toEqual([4096, 4000]);
    expect(maxRelative(psd.density, s.density)).toBeLessThan(1e-10);
  });

  it('gives the band RMS of the whole tone and its frequency, on the usual bins, with a note', async () => {
    const { row, result } = await reduce(lateTone(s.n, s.fs), s.fs, { spectrum: {}, bands: [[20, 200]] } as never);
    expect(row.dominant_frequency).toBe(s.dominant_frequency);
    expect(relative(row.spectral_centroid, s.spectral_centroid)).toBeLessThan(1e-9);
    expect(relative(row.band_20_200_rms, Math.sqrt(bandMeanSquare(asPsd(s.density, s.fs, s.segment), 20, 200)))).toBeLessThan(1e-9);
    // The tone's RMS over the recording, 1/√2 · √((4000 − 2176) / 4000) = 0.477 (derived); the Hann window weights its middle more.
    expect(row.band_20_200_rms).toBeGreaterThan(0.4);
    expect(row.band_20_200_rms).toBeLessThan(0.6);
    expect(result.messages.join('\n')).toMatch(/shorter \(4000 samples\) than one 4096-sample spectrum segment: one periodogram of the whole recording, zero-padded to 4096 points/);
  });
});

describe('the envelope of a recording barely longer than its settling trim', () => {
  it('is null with a note below one segment of its spectrum once trimmed', async () => {
    const fs = 25600;
    const x = Float64Array.from({ length: 4097 }, (_, i) => Math.sin(2 * Math.PI * 3000 * i / fs));
    const { row, result } = await reduce(x, fs, { envelope: { filter: { kind: 'bandpass', order: 4, low_hz: 2500, high_hz: 4500 } } } as never);
    expect([row.env_mean, row.env_rms, row.env_peak, row.env_dominant_frequency, row.filtered_rms]).toEqual([null, null, null, null, null]);
    expect(result.messages.join('\n')).toMatch(/1 envelope samples once 2048 settling samples are left out at each end, fewer than one 4096-sample segment of its spectrum; envelope left empty/);
  });
});
