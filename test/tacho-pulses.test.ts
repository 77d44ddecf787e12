// Tacho pulses against their known answers: the speed of a train of known period is 60 / (period × pulses_per_rev) rpm (common
// practice), and the pulse instants scipy.signal.find_peaks finds in the same samples (scipy 1.10, vectors made by
// test/fixtures/make-pulse-vectors.py): slow shafts with pulses one sample wide, a stray pulse in every revolution, a run-up,
// pulses active low, and a trigger in noise, whose speed is withheld rather than given wrong.
import { describe, expect, it } from 'vitest';
import type { ChannelDeclaration } from '../spec/archive.js';
import type { Flag } from '../stages/quality/flag.js';
import { uniform } from './dsp-signals.js';
import { fixture, readJson } from './helpers.js';
import { channel, reduce } from './reduce-signal.js';

const ref = readJson(fixture('pulse-vectors.json'));
const TACHO: ChannelDeclaration = channel({ name: 'tacho', quantity: 'voltage', unit: 'V', scale: 10, pulses_per_rev: 1, trigger_level: null, trigger_hysteresis: null });
const PHI = (Math.sqrt(5) - 1) / 2;

async function tacho(x: Float64Array, fs: number, decl: Partial<ChannelDeclaration> = {}) {
  const { row, result } = await reduce(x, fs, { windows: { length_s: 1 } }, { ...TACHO, ...decl });
  const flag = result.quality[0].flags.find((f) => f.name === 'pulse_train') as Flag;
  return { row: row as Record<string, number | null>, flag, notes: result.messages.join('\n'), windows: result.tables.windows };
}

const relative = (got: number | null, want: number) => Math.abs((got as number) / want - 1);
/** Speed from pulse instants (sample indices): revolutions between the first and last over their time. */
const rpmOf = (at: number[], fs: number, ppr: number) => (60 * fs * (at.length - 1)) / (ppr * (at.at(-1)! - at[0]));

/** As noise() in make-pulse-vectors.py: Gaussian by Box–Muller over the seeded generator, two draws a sample. */
function gaussian(n: number, sigma: number, seed = 5): Float64Array {
  const u = uniform(seed);
  return Float64Array.from({ length: n }, () => sigma * Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u()));
}

/** As slow_narrow() in make-pulse-vectors.py: 20 rpm, pulse k one sample of 5 V at round((k + 0.37) × 3 s). */
function slowNarrow(fs: number, seconds: number): Float64Array {
  const n = fs * seconds, x = gaussian(n, 0.05);
  for (let k = 0; ; k++) { const i = Math.round((k + 0.37) * 3 * fs); if (i >= n) return x; x[i] += 5; }
}

/** A 5 V trapezoid at pulse phase u (0 before it): linear edges `ramp` long, high for `duty`. */
const trapezoid = (u: number, duty: number, ramp: number) => 5 * (u < 0 ? 0 : u < ramp ? u / ramp : u < duty ? 1 : u < duty + ramp ? 1 - (u - duty) / ramp : 0);

/** As stray() in make-pulse-vectors.py: 1200 rpm, and a stray pulse in the first pulse period of each revolution k at phase 0.35 + 0.5·frac(kφ). */
function stray(fs: number, seconds: number, ppr: number): Float64Array {
  return Float64Array.from({ length: fs * seconds }, (_, i) => {
    const p = 0.9 + 20 * ppr * (i / fs), j = Math.floor(p), u = p - j, k = Math.floor(j / ppr);
    return trapezoid(u, 0.3, 0.01) + (j % ppr === 0 ? trapezoid(u - (0.35 + 0.5 * ((k * PHI) % 1)), 0.02, 0.005) : 0);
  });
}

describe('a slow shaft with pulses one sample wide', () => {
  it('its pulses are no spikes and its edges no aliasing on a tacho channel; the same samples on another channel are', async () => {
    const { fs } = ref.cases.slow_narrow as { fs: number };
    const x = slowNarrow(2000, 60);
    const flagsOf = async (decl: Partial<ChannelDeclaration>) => (await reduce(x, fs, {}, { ...TACHO, max_frequency_hz: 200, ...decl })).result.quality[0].flags as Flag[];
    const byName = (flags: Flag[], name: string) => flags.find((f) => f.name === name)!;
    const onTacho = await flagsOf({});
    expect(byName(onTacho, 'spikes')).toMatchObject({ severity: 'ok', value: 20 });
    expect(byName(onTacho, 'spikes').message).toMatch(/not judged on a tacho channel: its 20 isolated samples are pulses/);
    expect(byName(onTacho, 'aliasing').severity).toBe('ok');
    expect(byName(onTacho, 'aliasing').message).toMatch(/not judged on a tacho channel/);
    // One sample of 5 V in noise of 0.05 V puts its power everywhere up to Nyquist (a delta's flat spectrum, common practice).
    const elsewhere = await flagsOf({ pulses_per_rev: undefined });
    expect(byName(elsewhere, 'spikes').severity).toBe('warn');
    expect(byName(elsewhere, 'aliasing').severity).toBe('warn');
  });

  it('20 rpm, one pulse every 3 s on noise, active high and active low: the speed of scipy\'s peaks, and 20 rpm', async () => {
    for (const [name, x] of [['slow_narrow', slowNarrow(2000, 60)], ['slow_narrow_low', slowNarrow(2000, 60).map((v) => 5 - v)]] as const) {
      const { fs, peaks } = ref.cases[name] as { fs: number; peaks: number[] };
      const { row, flag, notes } = await tacho(x, fs);
      expect(row.revolutions).toBe(peaks.length - 1);
      expect(relative(row.speed_mean_rpm, rpmOf(peaks, fs, 1))).toBeLessThan(1e-5);
      for (const v of [row.speed_mean_rpm, row.speed_min_rpm, row.speed_max_rpm]) expect(relative(v, 20)).toBeLessThan(1e-5);
      expect(notes).toMatch(/with the extremes of the seconds before it \(pulses one sample wide, at most one a second\)/);
      expect(flag.severity).toBe('ok');
    }
  });

  it('clean pulses one sample wide from 1 pulse a second down to one every 6 s, 1 and 2 pulses a revolution: 60 / (period × pulses_per_rev)', async () => {
    const fs = 1000, seconds = 40, n = fs * seconds;
    for (const [period, ppr] of [[1, 1], [1.25, 1], [2, 1], [3, 2], [6, 1]]) {
      const x = new Float64Array(n);
      const at: number[] = [];
      for (let k = 0; (k + 0.6) * period * fs < n; k++) at.push(Math.round((k + 0.6) * period * fs));
      for (const i of at) x[i] = 5;
      const { row, flag } = await tacho(x, fs, { pulses_per_rev: ppr });
      expect(row.revolutions).toBe((at.length - 1) / ppr);
      for (const v of [row.speed_mean_rpm, row.speed_min_rpm, row.speed_max_rpm]) expect(relative(v, 60 / (period * ppr))).toBeLessThan(1e-9);
      expect(flag.severity).toBe('ok');
    }
  });

  it('a single pulse in a whole recording is not a pulse train: no speed, and not called flat', async () => {
    const x = new Float64Array(20_000);
    x[7_000] = 5;
    const { row, flag, notes } = await tacho(x, 1000);
    expect(row.speed_mean_rpm).toBeNull();
    expect(notes).toMatch(/no second holds a pulse standing clear of its noise/);
    expect(flag.severity).toBe('warn');
  });
});

describe('a tacho whose pulses span many samples', () => {
  it('says its spikes are not judged there, rather than "no spikes" (README: spikes are not judged on a tacho channel)', async () => {
    const fs = 10000, x = Float64Array.from({ length: 2 * fs }, (_, i) => trapezoid((i / fs * 25) % 1, 0.3, 0.01));
    const flags = (await reduce(x, fs, {}, TACHO)).result.quality[0].flags as Flag[];
    const spikes = flags.find((f) => f.name === 'spikes')!;
    expect(spikes.severity).toBe('ok');
    expect(spikes.message).toMatch(/^not judged on a tacho channel, whose pulses one sample wide would stand out/);
  });
});

describe('a stray pulse in every revolution (a second mark, a pickup of interference)', () => {
  it('is dropped as extra: the speed is that of the true pulses scipy finds by their width, 1200 rpm; the flag warns', async () => {
    for (const name of ['stray_1', 'stray_2']) {
      const { fs, seconds, ppr, pulses, strays } = ref.cases[name] as { fs: number; seconds: number; ppr: number; pulses: number[]; strays: number[] };
      const { row, flag, notes, windows } = await tacho(stray(fs, seconds, ppr), fs, { pulses_per_rev: ppr });
      expect(relative(row.speed_mean_rpm, rpmOf(pulses, fs, ppr))).toBeLessThan(1e-5);
      for (const v of [row.speed_mean_rpm, row.speed_min_rpm, row.speed_max_rpm]) expect(relative(v, 1200)).toBeLessThan(5e-4);
      for (const w of windows) expect(relative(w.speed_rpm as number, 1200)).toBeLessThan(5e-4);
      expect(row.revolutions).toBe((pulses.length - 1) / ppr);
      expect(row.pulses_missing).toBe(0);
      // Every stray is extra, but the last: after the last true pulse nothing tells it from an early one, so it is irregular.
      expect(row.pulses_extra).toBe(strays.length - 1);
      expect(flag.evidence.irregular).toBe(1);
      // The first strays listed at their rising edges, within a stray's width of scipy's peaks.
      const listed = notes.match(/extra tacho pulse\(s\) at ([^;]*);/)![1].split(', ').slice(0, 10).map((t) => parseFloat(t));
      listed.forEach((t, k) => expect(Math.abs(t - strays[k] / fs)).toBeLessThan(0.02 / (20 * ppr)));
      expect(flag.severity).toBe('warn');
      expect(flag.message).toMatch(/an extra pulse in many revolutions: a second mark/);
    }
  });
});

describe('neighbours', () => {
  it('a run-up 300 → 3000 rpm in 10 s, 1 and 4 pulses a revolution: mean, slowest and fastest revolution from the closed-form edges', async () => {
    const fs = 12800, seconds = 10, n = fs * seconds;
    // Shaft rate f(t) = 5 + 4.5 t rev/s: angle 5t + 2.25t² revolutions; pulse m rises through 2.5 V at angle (m − 0.3 + 0.025) / ppr.
    const angle = (t: number) => 5 * t + 2.25 * t * t;
    const when = (revs: number) => (-5 + Math.sqrt(25 + 9 * revs)) / 4.5;
    for (const ppr of [1, 4]) {
      const x = Float64Array.from({ length: n }, (_, i) => { const p = ppr * angle(i / fs) + 0.3; return trapezoid(p - Math.floor(p), 0.3, 0.05); });
      const t: number[] = [];
      for (let m = 1; when((m - 0.3 + 0.025) / ppr) < seconds - 0.001; m++) t.push(when((m - 0.3 + 0.025) / ppr));
      const { row, flag } = await tacho(x, fs, { pulses_per_rev: ppr });
      expect(row.revolutions).toBe((t.length - 1) / ppr);
      expect([row.pulses_missing, row.pulses_extra]).toEqual([0, 0]);
      expect(relative(row.speed_mean_rpm, (60 * (t.length - 1)) / (ppr * (t.at(-1)! - t[0])))).toBeLessThan(5e-4);
      expect(relative(row.speed_min_rpm, 60 / (t[ppr] - t[0]))).toBeLessThan(5e-4);
      expect(relative(row.speed_max_rpm, 60 / (t.at(-1)! - t.at(-1 - ppr)!))).toBeLessThan(5e-4);
      expect(flag.severity).toBe('ok');
    }
  });

  it('pulses active low (a 5 V level dipping to 0), 2 a revolution at 1500 rpm: 1500 rpm from the rising edges', async () => {
    const fs = 12800, n = fs * 5;
    const x = Float64Array.from({ length: n }, (_, i) => { const p = 50 * (i / fs) + 0.3; return 5 - trapezoid(p - Math.floor(p), 0.2, 0.02); });
    const { row, flag } = await tacho(x, fs, { pulses_per_rev: 2 });
    for (const v of [row.speed_mean_rpm, row.speed_min_rpm, row.speed_max_rpm]) expect(relative(v, 1500)).toBeLessThan(5e-4);
    expect([row.pulses_missing, row.pulses_extra]).toEqual([0, 0]);
    expect(flag.severity).toBe('ok');
  });

  it('a trigger declared inside noise: the pulse train does not hold together, so no speed is given and the flag fails', async () => {
    const u = uniform(11), fs = 1000, n = 30 * fs;
    const x = Float64Array.from({ length: n }, () => 0.05 * Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u()));
    const { row, flag, notes, windows } = await tacho(x, fs, { trigger_level: 0, trigger_hysteresis: 0.11 });
    for (const v of [row.speed_mean_rpm, row.speed_min_rpm, row.speed_max_rpm]) expect(v).toBeNull();
    for (const w of windows) expect(w.speed_rpm).toBeNull();
    const e = flag.evidence as Record<string, number>;
    expect(e.missing + e.irregular).toBeGreaterThan(e.good_intervals);
    expect(notes).toMatch(/no speed: \d+ missing and \d+ irregular tacho pulse\(s\) against \d+ good intervals/);
    expect(flag.severity).toBe('fail');
    expect(flag.message).toMatch(/so no speed is given/);
  });
});
