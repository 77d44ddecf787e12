// Velocity RMS of lines near the band's lower edge, where machines put their running speed: read from a finer spectrum of
// every D-th sample, against the analytic A/(√2·2πf) (common practice) and numpy's full-record FFT integration
// (test/fixtures/make-velocity-vectors.py).
import { describe, expect, it } from 'vitest';
import { lowBandSpectrum } from '../stages/octave.js';
import type { Flag } from '../stages/quality/flag.js';
import { DEFAULT_SPECTRUM } from '../stages/spectrum.js';
import { fineShare, velocityResolution, velocitySpectrum } from '../stages/velocity.js';
import { fixture, readJson } from './helpers.js';
import { reduce, sine } from './reduce-signal.js';

interface Case { kind: 'tone' | 'machine'; f: number; fs: number; analytic: number; fft: number }
const ref = readJson(fixture('velocity-vectors.json')) as { seconds: number; orders: Record<string, number>; cases: Case[] };

// The fixture's signals, sample for sample: a 10 m/s² tone at phase 0.4, or a shaft's orders k at phase 0.3·k.
function signal(c: Case): Float64Array {
  const n = Math.round(ref.seconds * c.fs);
  if (c.kind === 'tone') return sine(n, c.fs, c.f, 10, 0.4);
  const x = new Float64Array(n);
  for (const [k, a] of Object.entries(ref.orders)) {
    const part = sine(n, c.fs, Number(k) * c.f, a, 0.3 * Number(k));
    for (let i = 0; i < n; i++) x[i] += part[i];
  }
  return x;
}

const velocityFlag = (flags: Flag[]) => flags.find((f) => f.name === 'velocity_low_edge');

describe('velocity_10_1000_rms of running-speed lines with the default spectrum (4096-point segments)', () => {
  for (const c of ref.cases) {
    it(`${c.kind} at ${Number(c.f.toFixed(3))} Hz, ${c.fs / 1000} kHz: within 0.5 % of A/(√2·2πf) and of numpy's full-record FFT`, async () => {
      const { row, result } = await reduce(signal(c), c.fs, { spectrum: {}, velocity_bands: [[10, 1000]] });
      // Before: a 12.5 Hz tone read 18–29 % low, a 20 Hz tone 5–14 % high, at these rates.
      expect(Math.abs(row.velocity_10_1000_rms / c.analytic - 1)).toBeLessThan(0.005);
      expect(Math.abs(row.velocity_10_1000_rms / c.fft - 1)).toBeLessThan(0.005);
      expect(velocityFlag(result.quality[0].flags)).toBeUndefined();
    });
  }
});

describe('the finer spectrum velocity asks for', () => {
  it('is the default octave bands\' spectrum at 25.6 and 48 kHz (one spectrum, shared by key); none where the segment resolves 10 Hz', () => {
    const sets = [{ fraction: 1 as const, from: 31.5, to: 8000 }, { fraction: 3 as const, from: 25, to: 10000 }];
    for (const fs of [25600, 48000]) expect(velocitySpectrum(10, DEFAULT_SPECTRUM, fs)).toEqual(lowBandSpectrum(sets, DEFAULT_SPECTRUM, fs));
    // At 51.2 kHz the 25 Hz one-third-octave band needs 8192-point segments of every 16th sample; velocity's 0.78 Hz needs 4096.
    expect(velocitySpectrum(10, DEFAULT_SPECTRUM, 51200)).toEqual({ segment: 4096, decimation: 16 });
    expect(velocitySpectrum(10, DEFAULT_SPECTRUM, 25600)).toEqual({ segment: 4096, decimation: 16 });
    expect(velocitySpectrum(10, { ...DEFAULT_SPECTRUM, segment: 65536 }, 25600)).toBeNull();
    // A band from 100 Hz: 6.25 Hz bins resolve it already, so its figure reads as before.
    expect(velocitySpectrum(100, DEFAULT_SPECTRUM, 25600)).toBeNull();
    // A tone at 10^0.1 × 10 Hz reads within 0.25 %: (r/f)²/2 ≤ 0.0025.
    expect(velocityResolution(10)).toBeCloseTo(10 * 10 ** 0.1 * Math.sqrt(0.005), 12);
  });

  it('hands over by a raised cosine whose two shares sum to one (a tone in the hand-over counts once)', () => {
    for (const f of [100, 133, 150, 200, 250, 266, 300]) expect(fineShare(f, 133, 266) + (1 - fineShare(f, 133, 266))).toBe(1);
    expect(fineShare(133, 133, 266)).toBe(1);
    expect(fineShare(266, 133, 266)).toBe(0);
    expect(fineShare(199.5, 133, 266)).toBeCloseTo(0.5, 12);
  });

  it('a tone in the hand-over (180 and 230 Hz at 25.6 kHz) reads A/(√2·2πf) within 0.1 % (common practice)', async () => {
    const fs = 25600;
    for (const f of [180, 230]) {
      const { row } = await reduce(sine(fs * 10, fs, f, 10, 0.4), fs, { spectrum: {}, velocity_bands: [[10, 1000]] });
      expect(Math.abs(row.velocity_10_1000_rms / ((10 / Math.SQRT2 / (2 * Math.PI * f)) * 1000) - 1)).toBeLessThan(0.001);
    }
  });
});

describe('a recording too short for the resolution 10 Hz needs', () => {
  it('keeps its figure from the finest spectrum it has and warns in quality.json when a line near the low edge moves it over 5 %', async () => {
    const fs = 25600, v = (f: number) => (10 / Math.SQRT2 / (2 * Math.PI * f)) * 1000;
    // 0.4 s: one periodogram of the whole, 2.5 Hz resolution; a 12.5 Hz tone, one bin from the edge, reads within 5 % (−1.5 %).
    const near = await reduce(sine(fs * 0.4, fs, 12.5, 10, 0.4), fs, { spectrum: {}, velocity_bands: [[10, 1000]] });
    expect(Math.abs(near.row.velocity_10_1000_rms / v(12.5) - 1)).toBeLessThan(0.05);
    expect(velocityFlag(near.result.quality[0].flags)).toBeUndefined();
    // A 10.5 Hz tone straddles the edge with its main lobe: some 26 % low, and flagged.
    const short = await reduce(sine(fs * 0.4, fs, 10.5, 10, 0.4), fs, { spectrum: {}, velocity_bands: [[10, 1000]] });
    const flag = velocityFlag(short.result.quality[0].flags)!;
    expect(flag.severity).toBe('warn');
    expect(flag.evidence.resolution_hz).toBeCloseTo(2.5, 9);
    expect(flag.message).toMatch(/velocity_10_1000_rms may read 2\d\.\d % low: a line at 10\.5 Hz \(100 % of the band's velocity\) lies within the window's main lobe \(±5\.0 Hz at 2\.5 Hz resolution\) of the 10 Hz edge/);
    expect(short.row.velocity_10_1000_rms).toEqual(expect.any(Number));
    // A 100 Hz tone in the same 0.4 s lies far from the edge: no warning.
    const mid = await reduce(sine(fs * 0.4, fs, 100, 10, 0.4), fs, { spectrum: {}, velocity_bands: [[10, 1000]] });
    expect(velocityFlag(mid.result.quality[0].flags)).toBeUndefined();
  });
});
