// The velocity_low_edge flag: raised exactly where a line's window main lobe, straddling a velocity band's lower edge, moves
// the figure more than 5 % off the analytic A/(√2·2πf) (common practice; test/fixtures/make-velocity-edge-vectors.py).
import { describe, expect, it } from 'vitest';
import { paddedPeriodogram } from '../stages/dsp/welch.js';
import { makeWindow } from '../stages/dsp/window.js';
import type { ReductionSpec } from '../spec/reduction.js';
import type { Flag } from '../stages/quality/flag.js';
import { uniform } from './dsp-signals.js';
import { fixture, readJson } from './helpers.js';
import { reduce, sine } from './reduce-signal.js';

interface Case { fs: number; seconds: number; f: number; analytic: number }
const ref = readJson(fixture('velocity-edge-vectors.json')) as { hann_neighbour: [number, number]; cases: Case[] };
const spec: ReductionSpec = { spectrum: {}, velocity_bands: [[10, 1000]] };
const edgeFlag = (flags: Flag[]) => flags.find((f) => f.name === 'velocity_low_edge');

// The fixture's signal: 5 m/s² at f, phase 0.3, and 0.3 m/s² at 157 Hz.
function tones(c: Case): Float64Array {
  const n = Math.round(c.fs * c.seconds), x = sine(n, c.fs, c.f, 5, 0.3), y = sine(n, c.fs, 157, 0.3);
  for (let i = 0; i < n; i++) x[i] += y[i];
  return x;
}

// Gaussian noise (Box–Muller), white or 1/f: a sum of first-order low-passes with octave-spaced corners, each weighted by
// 1/√corner, whose Lorentzian spectra sum to 1/f between the extreme corners (common practice), scaled to 20 m/s² peak.
function noise(n: number, fs: number, seed: number, pink: boolean): Float64Array {
  const u = uniform(seed), x = new Float64Array(n), corners: number[] = [];
  for (let c = 0.5; c < fs / 4; c *= 2) corners.push(c);
  const y = new Float64Array(corners.length);
  let peak = 0;
  for (let i = 0; i < n; i++) {
    const g = Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u());
    if (pink) for (let j = 0; j < corners.length; j++) { y[j] += (1 - Math.exp((-2 * Math.PI * corners[j]) / fs)) * (g - y[j]); x[i] += y[j] / Math.sqrt(corners[j] / fs); }
    else x[i] = g;
    peak = Math.max(peak, Math.abs(x[i]));
  }
  return x.map((v) => (v * 20) / peak);
}

describe('velocity_low_edge on a tone near the 10 Hz edge (default spectrum)', () => {
  for (const c of ref.cases) {
    it(`${c.f} Hz, ${c.seconds} s at ${c.fs / 1000} kHz: flagged exactly when the figure is more than 5 % off A/(√2·2πf)`, async () => {
      const { row, result } = await reduce(tones(c), c.fs, spec);
      const error = row.velocity_10_1000_rms / c.analytic - 1;
      const flag = edgeFlag(result.quality[0].flags);
      expect(flag !== undefined, `error ${(error * 100).toFixed(2)} %`).toBe(Math.abs(error) > 0.05);
      // A line in the band: the flag's estimate of the error agrees with the error within half a per cent.
      if (flag && c.f >= 10) expect(Math.abs((flag.value as number) - error)).toBeLessThan(0.005);
      if (flag && c.f < 10) expect(flag.value as number).toBeGreaterThan(0.05);
    }, 30000);
  }

  it('says the line\'s frequency, its share, the resolution and what to do', async () => {
    const c = ref.cases.find((x) => x.fs === 48000 && x.seconds === 10 && x.f === 10.2)!;
    const { result } = await reduce(tones(c), c.fs, spec);
    const flag = edgeFlag(result.quality[0].flags)!;
    expect(flag.severity).toBe('warn');
    expect(flag.evidence.resolution_hz).toBeCloseTo(48000 / 16 / 4096, 9);
    expect(flag.message).toMatch(/velocity_10_1000_rms may read 18 % low: a line at 10\.2 Hz \(100 % of the band's velocity\) lies within the window's main lobe \(±1\.5 Hz at 0\.73 Hz resolution\) of the 10 Hz edge/);
    expect(flag.message).toMatch(/take a longer spectrum\.segment or recording, or add a band with a lower edge below 10 Hz beside 10–1000 Hz/);
  }, 30000);
});

describe('velocity_low_edge on broadband vibration, where what leaks out across the edge is about what leaks in', () => {
  for (const fs of [25600, 48000]) for (const seconds of [0.5, 1, 10]) for (const pink of [false, true]) {
    it(`${pink ? '1/f' : 'white'} noise, ${seconds} s at ${fs / 1000} kHz: no flag`, async () => {
      const { result } = await reduce(noise(Math.round(fs * seconds), fs, 7, pink), fs, spec);
      expect(edgeFlag(result.quality[0].flags)).toBeUndefined();
    }, 30000);
  }
});

describe('the Hann lobe the estimate rests on', () => {
  it('a bin-centred tone\'s neighbours at ±1 bin carry 1/4 of its power, as scipy.signal.periodogram gives (Harris 1978)', () => {
    const n = 1024, x = sine(n, n, 37, 1), p = paddedPeriodogram(x, makeWindow('hann', n), n);
    expect(p[36] / p[37]).toBeCloseTo(ref.hann_neighbour[0], 9);
    expect(p[38] / p[37]).toBeCloseTo(ref.hann_neighbour[1], 9);
  });
});
