// Tests that stop, rest or hold read without a warning from the noise_floor flag: windows at a floor amid live data are a
// note naming their stretches (how many, the first and the longest), since a rest, a hold or a quiet gap between events
// reads the same as a sensor that came loose. Invented rigs: a strain gauge loaded in steps with holds, a machine run up
// and coasted down to rest, a hammer test's quiet seconds, a half-sine shock. References: each 1 s window's RMS about its
// mean is computed here straight from the samples, as numpy's x.reshape(-1, fs).std(axis=1) would, and the stretches
// from those; a half-sine pulse of amplitude A over T has mean square A²/2 and mean 2A/π over T (closed form).
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { reduceRecording } from '../pipeline/reduce/compute.js';
import { encodeWav } from '../scripts/wav-file.js';
import type { ChannelDeclaration } from '../spec/archive.js';
import type { Flag } from '../stages/quality/flag.js';
import { uniform } from './dsp-signals.js';
import { tempDir } from './helpers.js';
import { channel } from './reduce-signal.js';

/** Gaussian noise of RMS `sigma` (Box–Muller over a seeded uniform generator). */
function gaussian(n: number, sigma: number, seed: number): Float64Array {
  const u = uniform(seed);
  return Float64Array.from({ length: n }, () => sigma * Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u()));
}

/** Piecewise linear through (ts[k], vs[k]): numpy's interp. */
const interp = (t: number, ts: number[], vs: number[]) => {
  if (t <= ts[0]) return vs[0];
  for (let k = 1; k < ts.length; k++) if (t <= ts[k]) return vs[k - 1] + (vs[k] - vs[k - 1]) * (t - ts[k - 1]) / (ts[k] - ts[k - 1]);
  return vs[vs.length - 1];
};

const onCodes = (x: Float64Array, step: number) => x.map((v) => Math.round(v / step) * step);

/** Each whole window's RMS about its mean: numpy's x[:k*w].reshape(k, w).std(axis=1). */
function windowStds(x: Float64Array, w: number): number[] {
  const out: number[] = [];
  for (let s = 0; s + w <= x.length; s += w) {
    let m = 0; for (let i = s; i < s + w; i++) m += x[i]; m /= w;
    let q = 0; for (let i = s; i < s + w; i++) q += (x[i] - m) ** 2; out.push(Math.sqrt(q / w));
  }
  return out;
}

/** Runs of windows below `floor`, as [first window, past the last): the stretches the note names. */
function stretchesBelow(stds: number[], floor: number): [number, number][] {
  const runs: [number, number][] = [];
  stds.forEach((s, k) => {
    if (s >= floor) return;
    const last = runs[runs.length - 1];
    if (last && last[1] === k) last[1] = k + 1; else runs.push([k, k + 1]);
  });
  return runs;
}

async function flagsOf(x: Float64Array, fs: number, decl: ChannelDeclaration, encoding: 'pcm16' | 'pcm24') {
  const path = join(tempDir(), 'x.wav');
  writeFileSync(path, encodeWav({ sampleRate: fs, channels: [x.map((v) => v / decl.scale)], encoding }));
  const r = await reduceRecording({ recording: 'x', path, group: 'g', format: null, sampleRate: null, layout: null, channels: [decl], labels: {}, durationS: null, spec: {}, chunkFrames: 4096 });
  expect(r.reason).toBeUndefined();
  return (name: string) => r.quality[0].flags.find((f) => f.name === name) as Flag;
}

/** The flag's stretches held against those found straight from the window RMS, in seconds of 1 s windows. */
function expectStretches(f: Flag, runs: [number, number][]) {
  const longest = runs.reduce((a, b) => (b[1] - b[0] > a[1] - a[0] ? b : a));
  expect(f.evidence).toMatchObject({
    quiet_windows: runs.reduce((s, r) => s + r[1] - r[0], 0), quiet_stretches: runs.length,
    first_quiet_s: runs[0][0], first_quiet_end_s: runs[0][1], longest_quiet_s: longest[0], longest_quiet_end_s: longest[1],
  });
}

describe('windows at the converter\'s floor amid live data (no noise_floor declared) are a note', () => {
  it('a strain gauge loaded in steps with holds: the holds read as a note naming six stretches, the longest the unloaded end', async () => {
    // ±2000 µm/m on 16 bits, 500 Hz, 30 s; steps of 0.5 s between holds of 4.5 s, the gauge's noise 0.7 steps RMS.
    const fs = 500, n = 30 * fs, step = 2000 / 2 ** 15;
    const hiss = gaussian(n, 0.7 * step, 31);
    const x = onCodes(Float64Array.from({ length: n }, (_, i) => interp(i / fs, [0, 3, 3.5, 8, 8.5, 13, 13.5, 18, 18.5, 23, 23.5, 30], [0, 0, 200, 200, 400, 400, 600, 600, 300, 300, 0, 0]) + hiss[i]), step);
    const runs = stretchesBelow(windowStds(x, fs), 2 * step);
    expect(runs).toEqual([[0, 3], [4, 8], [9, 13], [14, 18], [19, 23], [24, 30]]);
    const f = (await flagsOf(x, fs, channel({ quantity: 'strain', unit: 'µm/m', scale: 2000, range: [-2000, 2000], bits: 16, max_frequency_hz: 100 }), 'pcm16'))('noise_floor');
    expect(f.severity).toBe('note');
    expectStretches(f, runs);
    expect(f.message).toMatch(new RegExp(`in ${runs.length} stretches, the first from 0 s to 3 s, the longest from 24 s to 30 s`));
  });

  // A machine run up over 2 s from rest, steady at 50 Hz, coasted down to rest: 16 bits for ±500 m/s², 4 kHz, 10 s, the
  // accelerometer's own noise at rest 0.6 steps RMS (under one code).
  const fs = 4000, n = 10 * fs, step = 500 / 2 ** 15;
  const acc = channel({ scale: 500, range: [-500, 500], bits: 16, max_frequency_hz: 1500 });
  function runUp(seed: number): Float64Array {
    const hiss = gaussian(n, 2, seed), rest = gaussian(n, 0.6 * step, seed + 1);
    let phase = 0;
    return onCodes(Float64Array.from({ length: n }, (_, i) => {
      const f = interp(i / fs, [0, 1, 3, 7, 9, 10], [0, 0, 50, 50, 0, 0]), a = (f / 50) ** 2;
      phase += 2 * Math.PI * f / fs;
      return a * (8 * Math.sin(phase) + 3 * Math.sin(2 * phase + 0.4) + hiss[i]) + rest[i];
    }), step);
  }

  it('a run-up, steady running and coast-down to rest: the rests at both ends are noted, not warned', async () => {
    const x = runUp(41);
    const runs = stretchesBelow(windowStds(x, fs), 2 * step);
    expect(runs).toEqual([[0, 1], [9, 10]]);
    const f = (await flagsOf(x, fs, acc, 'pcm16'))('noise_floor');
    expect(f.severity).toBe('note');
    expectStretches(f, runs);
    expect(f.message).toMatch(/in 2 stretches, the first and longest from 0 s to 1 s, while the others stand \d+\.\d dB above it/);
  });

  it('the same run with the sensor off for 2 s mid-run: the note names that stretch as the longest, not only the rest at 0 s', async () => {
    // ±1 code drawn evenly: √(2/3) steps RMS (derived), a sensor off its mount or its supply while the machine runs.
    const u = uniform(43), x = runUp(41);
    for (let i = 4 * fs; i < 6 * fs; i++) x[i] = (Math.floor(3 * u()) - 1) * step;
    const runs = stretchesBelow(windowStds(x, fs), 2 * step);
    expect(runs).toEqual([[0, 1], [4, 6], [9, 10]]);
    const f = (await flagsOf(x, fs, acc, 'pcm16'))('noise_floor');
    expect(f.severity).toBe('note');
    expectStretches(f, runs);
    expect(f.message).toMatch(/4 of its 10 windows of 1 s sit at the converter's floor .*, in 3 stretches, the first from 0 s to 1 s, the longest from 4 s to 6 s/);
  });
});

describe('windows within 3 dB of a declared noise_floor amid live data are a note', () => {
  const fs = 8000;

  it('a hammer test on 24 bits: three impacts in the first 2 s, then the chain\'s noise: the quiet seconds are noted', async () => {
    const n = 4 * fs, floor = 0.003;
    const hiss = gaussian(n, floor, 51);
    // Each impact rings the structure at 180 and 460 Hz, decaying with 1 % and 0.8 % of critical damping.
    const x = Float64Array.from({ length: n }, (_, i) => {
      let v = hiss[i];
      for (const [t0, a] of [[0.2, 80], [0.6, 65], [1.0, 72]]) {
        const t = i / fs - t0;
        if (t >= 0) v += a * (0.12 * Math.exp(-2 * Math.PI * 180 * 0.01 * t) * Math.sin(2 * Math.PI * 180 * t) + 0.07 * Math.exp(-2 * Math.PI * 460 * 0.008 * t) * Math.sin(2 * Math.PI * 460 * t));
      }
      return v;
    });
    const runs = stretchesBelow(windowStds(x, fs), floor * 10 ** (3 / 20));
    expect(runs).toEqual([[2, 4]]);
    const f = (await flagsOf(x, fs, channel({ scale: 500, range: [-500, 500], bits: 24, max_frequency_hz: 3000, noise_floor: floor }), 'pcm24'))('noise_floor');
    expect(f.severity).toBe('note');
    expectStretches(f, runs);
    expect(f.message).toMatch(/2 of its 4 windows of 1 s within 3 dB of the floor, in one stretch from 2 s to 4 s/);
  });

  it('a half-sine shock of 490 m/s² over 11 ms, then the chain\'s noise: the quiet second is noted, and the RMS is the pulse\'s', async () => {
    const n = 2 * fs, floor = 0.02, i0 = 0.5 * fs, m = Math.round(0.011 * fs);
    const hiss = gaussian(n, floor, 53);
    const x = Float64Array.from({ length: n }, (_, i) => hiss[i] + (i >= i0 && i < i0 + m ? 490 * Math.sin(Math.PI * (i - i0) / m) : 0));
    const runs = stretchesBelow(windowStds(x, fs), floor * 10 ** (3 / 20));
    expect(runs).toEqual([[1, 2]]);
    const scale = 5000, decl = channel({ scale, range: [-5000, 5000], bits: 24, max_frequency_hz: 3000, noise_floor: floor });
    const flag = await flagsOf(onCodes(x, scale / 2 ** 23), fs, decl, 'pcm24');
    const f = flag('noise_floor');
    expect(f.severity).toBe('note');
    expectStretches(f, runs);
    // RMS about the mean (closed form): the pulse's mean square (490²/2)·(m/n) and the noise's floor² less the pulse's mean², (490·2/π·m/n)².
    const mean = 490 * (2 / Math.PI) * m / n;
    expect((f.evidence.rms as number) / Math.sqrt(490 ** 2 / 2 * m / n + floor ** 2 - mean ** 2)).toBeCloseTo(1, 2);
  });
});
