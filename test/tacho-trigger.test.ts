// An undeclared tacho trigger and the pulse_train flag, against pulse trains whose edges are known by construction: a slow shaft
// whose first second holds only noise, pulses one sample wide, a DC level drifting under the pulses, a run-up, missing, extra and
// chattering pulses. Levels of a stretch judged by the share of samples between 30 % and 70 % of its span: a sine's 26 % is the
// arcsine law and a triangle's 40 % the uniform law (common practice); Gaussian noise's share is measured with numpy in trigger-level.ts.
import { describe, expect, it } from 'vitest';
import type { ChannelDeclaration } from '../spec/archive.js';
import { middleShare, smoothedExtremes, triggerFrom } from '../stages/dsp/trigger-level.js';
import type { Flag } from '../stages/quality/flag.js';
import { pulseCoverage } from '../stages/quality/pulse-train.js';
import { uniform } from './dsp-signals.js';
import { channel, reduce } from './reduce-signal.js';

const TACHO: ChannelDeclaration = channel({ name: 'tacho', quantity: 'voltage', unit: 'V', scale: 10, pulses_per_rev: 1, trigger_level: null, trigger_hysteresis: null });

/** Gaussian noise of RMS `sigma` (Box–Muller over a seeded uniform generator). */
function gaussian(n: number, sigma: number, seed = 7): Float64Array {
  const u = uniform(seed);
  return Float64Array.from({ length: n }, () => sigma * Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u()));
}

/** A 5 V trapezoid pulse at pulse phase u ∈ [0, 1) (0 before it): linear edges `ramp` long, high for `duty`; it crosses 2.5 V at u = ramp/2. */
const trapezoid = (u: number, duty: number, ramp: number) => 5 * (u < 0 ? 0 : u < ramp ? u / ramp : u < duty ? 1 : u < duty + ramp ? 1 - (u - duty) / ramp : 0);

/** Pulses at phase `phase(t)` (in pulses), `shape(k, u)` for pulse k at phase u within it. */
const train = (n: number, fs: number, phase: (t: number) => number, shape: (k: number, u: number) => number) =>
  Float64Array.from({ length: n }, (_, i) => { const p = phase(i / fs); return shape(Math.floor(p), p - Math.floor(p)); });

const add = (a: Float64Array, b: Float64Array) => a.map((v, i) => v + b[i]);

async function tacho(x: Float64Array, fs: number, decl: Partial<ChannelDeclaration> = {}) {
  const { row, result } = await reduce(x, fs, { windows: { length_s: 1 } }, { ...TACHO, ...decl });
  const flag = result.quality[0].flags.find((f) => f.name === 'pulse_train') as Flag;
  return { row: row as Record<string, number | null>, flag, notes: result.messages.join('\n'), windows: result.tables.windows };
}

const relative = (got: number | null, want: number) => Math.abs((got as number) / want - 1);

describe('an undeclared tacho trigger', () => {
  it('a 20 rpm shaft whose first second holds only noise: the level comes from the first second with a pulse, and the speed is 20 rpm', async () => {
    const fs = 12800, seconds = 30, n = fs * seconds;
    // One pulse every 3 s, 5 % duty, the first rising edge at (1 − 0.37) × 3 = 1.89 s; 0.05 V of Gaussian noise.
    const phase = (t: number) => 0.37 + t / 3;
    const x = add(train(n, fs, phase, (_k, u) => trapezoid(u, 0.05, 0.0005)), gaussian(n, 0.05));
    const { row, flag, notes, windows } = await tacho(x, fs);
    // Edges by construction: pulse k (k = 1, 2, …) crosses 2.5 V at t = 3 (k − 0.37 + 0.00025), all before 30 s for k ≤ 10.
    const edges = Array.from({ length: 10 }, (_, k) => 3 * (k + 1 - 0.37 + 0.00025)).filter((t) => t < seconds - 0.01);
    expect(row.revolutions).toBe(edges.length - 1);
    expect(row.pulses_missing).toBe(0);
    expect(row.pulses_extra).toBe(0);
    for (const v of [row.speed_mean_rpm, row.speed_min_rpm, row.speed_max_rpm]) expect(relative(v, 20)).toBeLessThan(5e-4);
    expect(notes).toMatch(/found from the second from 1 s \(no earlier second holds a pulse standing clear of its noise\)/);
    // Every window the pulses cover reads 20 rpm; the first, before the first pulse, has no speed.
    expect(windows[0].speed_rpm).toBeNull();
    for (const w of windows.slice(2, -2)) expect(relative(w.speed_rpm as number, 20)).toBeLessThan(5e-4);
    expect(flag.severity).toBe('ok');
    // A trigger inside the noise, as the first second alone gave (level −0.006 V, hysteresis 0.11 V), counts noise crossings: it fails.
    const noisy = await tacho(x, fs, { trigger_level: -0.006, trigger_hysteresis: 0.11 });
    expect(noisy.flag.severity).toBe('fail');
    expect(noisy.flag.message).toMatch(/check the declared trigger_level and trigger_hysteresis/);
  });

  it('pulses one sample wide, clean and in noise, give the speed; a lone spike ten times higher still does not set the level', async () => {
    const fs = 25600, seconds = 10, n = fs * seconds;
    // 1200 rpm, one pulse per revolution: pulse k at the sample nearest (k − 0.3) / 20 s.
    const at = Array.from({ length: 199 }, (_, k) => Math.round(((k + 1 - 0.3) / 20) * fs));
    const clean = new Float64Array(n);
    for (const i of at) clean[i] = 5;
    // Each pulse rises from 0 to 5 V between samples i − 1 and i: it crosses the level 2.5 V half-way, at i − 0.5.
    const mean = (60 * fs * (at.length - 1)) / (at.at(-1)! - at[0]);
    for (const x of [clean, add(clean, gaussian(n, 0.05, 3))]) {
      const { row, flag, notes } = await tacho(x, fs);
      expect(notes).not.toMatch(/flat/);
      expect(row.revolutions).toBe(at.length - 1);
      expect(relative(row.speed_mean_rpm, mean)).toBeLessThan(1e-4);
      expect(flag.severity).toBe('ok');
    }
    const spiked = clean.slice();
    spiked[Math.round(0.42 * fs)] = 50;
    const { row, notes } = await tacho(spiked, fs);
    expect(notes).toMatch(/tacho edges timed at 2\.5 V, hysteresis 2 V, found from the first second/);
    expect(row.pulses_extra).toBe(1);
    expect(row.revolutions).toBe(at.length - 1);
  });

  it('a DC level drifting 0 → 6 V under 5 V pulses: the level follows it and no pulse is lost; a fixed level loses most and fails', async () => {
    const fs = 25600, seconds = 10, n = fs * seconds;
    const phase = (t: number) => 0.3 + 20 * t; // 1200 rpm
    const x = train(n, fs, phase, (_k, u) => trapezoid(u, 0.3, 0.01)).map((v, i) => v + (0.6 * i) / fs);
    // Pulses k = 1 … 200 rise within the recording, at (k − 0.3) / 20 s.
    const { row, flag, notes } = await tacho(x, fs);
    expect(row.revolutions).toBe(199);
    expect(row.pulses_missing).toBe(0);
    expect(relative(row.speed_mean_rpm, 1200)).toBeLessThan(5e-4);
    expect(notes).toMatch(/trigger level followed them \d+ time\(s\) from \d s on/);
    expect(flag.severity).toBe('ok');
    // The level the first second gives (2.8 V, hysteresis 2.24 V), held fixed: the low level passes the arming threshold after ~3 s.
    const fixed = await tacho(x, fs, { trigger_level: 2.8, trigger_hysteresis: 2.24 });
    expect(fixed.row.revolutions as number).toBeLessThan(80);
    expect(relative(fixed.row.speed_mean_rpm, 1200)).toBeLessThan(5e-4);
    expect(fixed.flag.severity).toBe('fail');
    expect(fixed.flag.value as number).toBeLessThan(0.5);
  });

  it('a flat signal and one of noise alone give no level and say which: no speed rather than a wrong one, a note when flat (a shaft at rest), a failure for noise (no pulse train found)', async () => {
    const fs = 1000, n = 5 * fs;
    const flat = await tacho(new Float64Array(n).fill(1), fs);
    expect(flat.notes).toMatch(/tacho signal flat over the first second; flat in every second of the 5 s read/);
    expect(flat.flag.severity).toBe('note');
    expect(flat.flag.message).toMatch(/the signal is flat/);
    const noise = await tacho(gaussian(n, 0.05), fs);
    expect(noise.row.speed_mean_rpm).toBeNull();
    expect(noise.notes).toMatch(/only noise over the first second; no second holds a pulse standing clear of its noise/);
    expect(noise.flag.severity).toBe('fail');
    expect(noise.flag.message).toMatch(/no pulse train found/);
  });
});

describe('the levels of a stretch', () => {
  const fs = 25600;
  it('a pickup\'s sine at fs/8 stands clear (26 % between 30 % and 70 % of its span, the arcsine law); Gaussian noise does not', () => {
    const sine = Float64Array.from({ length: fs }, (_, i) => Math.sin((2 * Math.PI * i) / 8 + 0.1));
    expect(middleShare(sine, smoothedExtremes(sine))).toBeCloseTo((2 / Math.PI) * Math.asin(0.4), 1);
    expect(triggerFrom(sine)).toMatchObject({ kind: 'smoothed' });
    for (const length of [1000, 25600]) expect(triggerFrom(gaussian(length, 1, 5))).toBe('noise');
    expect(triggerFrom(new Float64Array(100).fill(2))).toBe('flat');
  });

  it('a converter flickering between two codes is not a pulse train when its step is known', () => {
    const u = uniform(9), step = 10 / 32768;
    const flicker = Float64Array.from({ length: fs }, () => (u() < 0.5 ? 0 : step));
    expect(triggerFrom(flicker, step)).toBe('noise');
  });
});

describe('the pulse_train flag', () => {
  it('coverage: good intervals over the duration less two mean intervals, at most 1 (arithmetic)', () => {
    expect(pulseCoverage(8, 8, 10)).toBe(1); // 8 intervals of 1 s in 10 s: the ends take the other two
    expect(pulseCoverage(4, 8, 10)).toBeCloseTo(4 / (10 - 1), 12);
    expect(pulseCoverage(0, 0, 10)).toBe(0);
  });

  it('a clean run-up (600 → 2400 rpm, 60 pulses a revolution) reads ok; a missing and an extra pulse note; a second pulse every revolution is dropped and warns', async () => {
    const fs = 25600, seconds = 10, n = fs * seconds;
    const runUp = train(n, fs, (t) => 60 * (0.3 + 10 * t + 1.5 * t * t), (_k, u) => trapezoid(u, 0.5, 0.1));
    expect((await tacho(runUp, fs, { pulses_per_rev: 60 })).flag.severity).toBe('ok');
    // 1200 rpm, 1 pulse a revolution: pulse 100 missing, a stray pulse in the low half of period 150.
    const phase = (t: number) => 0.3 + 20 * t;
    const faults = train(n, fs, phase, (k, u) => (k === 100 ? 0 : trapezoid(u, 0.3, 0.01) + (k === 150 ? trapezoid(u - 0.6, 0.05, 0.01) : 0)));
    const few = await tacho(faults, fs);
    expect([few.row.pulses_missing, few.row.pulses_extra]).toEqual([1, 1]);
    expect(few.flag.severity).toBe('note');
    // A stray pulse in every period (a second mark on the shaft, or pulses_per_rev 1 where it is 2): as many faults as good intervals.
    const chatter = train(n, fs, phase, (_k, u) => trapezoid(u, 0.3, 0.01) + trapezoid(u - 0.6, 0.05, 0.01));
    const every = await tacho(chatter, fs);
    // Truth: 1200 rpm. Each stray, 0.6 of a revolution after a true pulse, is extra; the true pulses keep their speed.
    expect((every.row.pulses_missing as number) + (every.row.pulses_extra as number)).toBeGreaterThan(150);
    for (const v of [every.row.speed_mean_rpm, every.row.speed_min_rpm, every.row.speed_max_rpm]) expect(relative(v, 1200)).toBeLessThan(5e-4);
    expect(every.flag.severity).toBe('warn');
    expect(every.flag.message).toMatch(/pulses_per_rev/);
  });

  it('is not judged on a channel without pulses_per_rev', async () => {
    const { result } = await reduce(gaussian(4000, 1), 1000, {}, channel());
    const flag = result.quality[0].flags.find((f) => f.name === 'pulse_train')!;
    expect([flag.severity, flag.value]).toEqual(['ok', null]);
  });
});
