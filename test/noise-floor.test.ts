// The noise_floor flag: a channel's level against the measurement chain's own noise, where archive.yaml declares it.
// Uncorrelated powers add (common practice: the same rule corrects sound levels for background noise in ISO 3744, from
// memory), so a channel d dB above the floor reads its RMS 1/√(1 − 10^(−d/10)) − 1 high; the tests hold that against the
// RMS of the signal and the noise taken apart, and show a dead sensor on a 24-bit converter, which the flatline flag's
// spread of a few steps cannot see, failing against its declared floor.
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { reduceRecording } from '../pipeline/reduce/compute.js';
import type { ChannelDeclaration } from '../spec/archive.js';
import type { Flag } from '../stages/quality/flag.js';
import { EXCESS_UNTOLD_WITHIN_DB, rmsExcess } from '../stages/quality/noise-floor.js';
import { uniform } from './dsp-signals.js';
import { tempDir } from './helpers.js';
import { channel, sine } from './reduce-signal.js';

/** Gaussian noise of RMS `sigma` (Box–Muller over a seeded uniform generator). */
function gaussian(n: number, sigma: number, seed = 7): Float64Array {
  const u = uniform(seed);
  return Float64Array.from({ length: n }, () => sigma * Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u()));
}

const rmsOf = (x: Float64Array) => { let m = 0; for (const v of x) m += v; m /= x.length; let s = 0; for (const v of x) s += (v - m) ** 2; return Math.sqrt(s / x.length); };

/** A mono 24-bit PCM WAV (RIFF, WAVE_FORMAT_PCM) of values in full-scale units, rounded to the converter's codes. */
function wav24(x: Float64Array, fs: number): Buffer {
  const data = Buffer.alloc(x.length * 3);
  x.forEach((v, i) => data.writeIntLE(Math.max(-(2 ** 23), Math.min(2 ** 23 - 1, Math.round(v * 2 ** 23))), i * 3, 3));
  const fmt = Buffer.alloc(16);
  fmt.writeUInt16LE(1, 0); fmt.writeUInt16LE(1, 2); fmt.writeUInt32LE(fs, 4); fmt.writeUInt32LE(fs * 3, 8); fmt.writeUInt16LE(3, 12); fmt.writeUInt16LE(24, 14);
  const chunk = (id: string, body: Buffer) => { const h = Buffer.alloc(8); h.write(id, 0, 'ascii'); h.writeUInt32LE(body.length, 4); return Buffer.concat([h, body]); };
  const body = Buffer.concat([Buffer.from('WAVE'), chunk('fmt ', fmt), chunk('data', data)]);
  return Buffer.concat([Buffer.from('RIFF'), Buffer.from([body.length & 255, (body.length >> 8) & 255, (body.length >> 16) & 255, body.length >>> 24]), body]);
}

async function flagsOf(x: Float64Array, fs: number, decl: ChannelDeclaration) {
  const path = join(tempDir(), 'x.wav');
  writeFileSync(path, wav24(x.map((v) => v / decl.scale), fs));
  const r = await reduceRecording({ recording: 'x', path, group: 'g', format: null, sampleRate: null, layout: null, channels: [decl], labels: {}, durationS: null, spec: {}, chunkFrames: 4096 });
  expect(r.reason).toBeUndefined();
  const flag = (name: string) => r.quality[0].flags.find((f) => f.name === name) as Flag;
  return { flag, row: r.rows[0] as Record<string, number | null> };
}

describe('the noise_floor flag', () => {
  const fs = 8000, n = 4 * fs, scale = 50; // an invented rig's accelerometer: ±50 m/s² full scale on a 24-bit converter
  const step = scale / 2 ** 23;

  it('fails a dead sensor on a 24-bit converter (the chain\'s noise, dozens of steps wide) that flatline reads as moving', async () => {
    const floor = 40 * step;
    const dead = gaussian(n, floor);
    const { flag, row } = await flagsOf(dead, fs, channel({ scale, bits: 24, noise_floor: floor }));
    expect(flag('flatline').severity).toBe('ok'); // a spread of hundreds of steps: not flat
    expect(flag('noise_floor').severity).toBe('fail');
    expect(flag('noise_floor').message).toMatch(/dead or disconnected sensor/);
    expect(Math.abs(row.above_noise_floor_db!)).toBeLessThan(0.5);
  });

  it('passes a running machine far above the floor, and where no floor is declared judges only the windows, against the converter\'s floor', async () => {
    const floor = 40 * step;
    const hiss = gaussian(n, floor);
    const live = sine(n, fs, 97, 1.4).map((v, i) => v + hiss[i]);
    const declared = await flagsOf(live, fs, channel({ scale, bits: 24, noise_floor: floor }));
    expect(declared.flag('noise_floor').severity).toBe('ok');
    expect(declared.row.above_noise_floor_db).toBeCloseTo(20 * Math.log10(rmsOf(live) / floor), 3);
    const undeclared = await flagsOf(gaussian(n, floor), fs, channel({ scale, bits: 24 }));
    // Without a floor only the windows are held against the converter's own (2 steps RMS): the chain's noise of 40 steps on
    // a 24-bit converter stands above it, so a sensor dead throughout still needs its floor declared to be told.
    expect(undeclared.flag('noise_floor')).toMatchObject({ severity: 'ok', value: null, evidence: { noise_floor: null, windows: 4, quiet_windows: 0 } });
    expect(undeclared.flag('noise_floor').message).toMatch(/^no noise_floor declared; none of its 4 windows of 1 s at the converter's floor/);
    expect(undeclared.row.above_noise_floor_db).toBeNull();
  });

  it('warns where the chain\'s noise raises RMS by over 5 % (10.3 dB, derived), as the signal and noise taken apart confirm', async () => {
    const floor = 0.01;
    // A tone 8 dB above the floor in total: the signal's own RMS from the power sum.
    const noise = gaussian(n, floor, 11), total = floor * 10 ** (8 / 20);
    const tone = sine(n, fs, 123.4, Math.SQRT2 * Math.sqrt(total ** 2 - floor ** 2));
    const x = tone.map((v, i) => v + noise[i]);
    const { flag, row } = await flagsOf(x, fs, channel({ scale, bits: 24, noise_floor: floor }));
    expect(flag('noise_floor').severity).toBe('warn');
    const db = row.above_noise_floor_db!;
    // RMS of the mixture over the tone's own RMS, taken apart here: the derived excess agrees to the noise's chance correlation.
    expect(rmsExcess(db)).toBeCloseTo(rmsOf(x) / rmsOf(tone) - 1, 2);
    expect(rmsExcess(10.3)).toBeCloseTo(0.05, 3);
    expect(flag('noise_floor').message).toMatch(/raises RMS and band levels by up to \d+(\.\d+)? %/);
  });

  it('fails within 3 dB of the floor, and below it says the declaration may be too high', async () => {
    const floor = 0.01;
    const near = await flagsOf(gaussian(n, floor * 10 ** (2 / 20), 3), fs, channel({ scale, bits: 24, noise_floor: floor }));
    expect(near.flag('noise_floor').severity).toBe('fail');
    expect(near.flag('noise_floor').message).toMatch(/holds at least half the power/);
    const below = await flagsOf(gaussian(n, floor / 2, 5), fs, channel({ scale, bits: 24, noise_floor: floor }));
    expect(below.flag('noise_floor').severity).toBe('fail');
    expect(below.flag('noise_floor').message).toMatch(/noise_floor declared too high/);
  });

  // Near 0 dB the excess 1/√(1 − 10^(−d/10)) − 1 is set by sampling noise: a dead sensor's noise at the floor read 113000 % on one
  // channel and 32400 % on another. Within 1 dB the message says the figures describe the chain's noise, with no percentage.
  it('within 1 dB of the floor names no percentage; beyond it the percentage is the power-addition formula\'s (an invented rig\'s levels)', async () => {
    const fs = 12800, n = 4 * fs, floor = 0.002;
    // The formula (power addition of uncorrelated noise, common practice), evaluated here.
    const formula = (d: number) => 1 / Math.sqrt(1 - 10 ** (-d / 10)) - 1;
    // The bound: a 0.1 dB error moves the figure by 5 % (our tolerance) at 0.9 dB, by more nearer the floor; at 2.9 dB by 1.2 %.
    const moves = (d: number) => (1 + formula(d - 0.05)) / (1 + formula(d + 0.05)) - 1;
    expect(moves(0.9)).toBeCloseTo(0.05, 2);
    expect(moves(0.83)).toBeGreaterThan(0.05);
    expect(moves(2.9)).toBeLessThan(0.013);
    // 0.1 dB is two sampling spreads of the RMS of a 1 s window of 12,800 noise samples, 8.686/√(2N) dB (from memory), as
    // 200 windows of Gaussian noise have it.
    const windowDb = Array.from({ length: 200 }, (_, k) => 20 * Math.log10(rmsOf(gaussian(fs, 1, 100 + k))));
    const meanDb = windowDb.reduce((a, b) => a + b, 0) / windowDb.length;
    const spreadDb = Math.sqrt(windowDb.reduce((a, v) => a + (v - meanDb) ** 2, 0) / (windowDb.length - 1));
    expect(spreadDb).toBeGreaterThan(0.8 * (20 / Math.LN10) / Math.sqrt(2 * fs));
    expect(spreadDb).toBeLessThan(1.2 * (20 / Math.LN10) / Math.sqrt(2 * fs));
    expect(2 * (20 / Math.LN10) / Math.sqrt(2 * fs)).toBeCloseTo(0.1, 1);
    expect(EXCESS_UNTOLD_WITHIN_DB).toBe(1);
    // Dead sensors reading their chain's noise a little below, at and above the declared floor, scaled to their RMS exactly.
    const at = async (level: number, seed: number) => {
      const g = gaussian(n, 1, seed), r = rmsOf(g);
      return flagsOf(g.map((v) => (v / r) * level), fs, channel({ scale, bits: 24, noise_floor: floor }));
    };
    for (const [level, seed] of [[0.0020, 21], [0.0022, 22]]) {
      const { flag, row } = await at(level, seed);
      expect(row.above_noise_floor_db!).toBeLessThan(1);
      expect(flag('noise_floor').severity).toBe('fail');
      expect(flag('noise_floor').message).toMatch(/within 1 dB of the chain's own noise, so every figure describes that noise, not the signal/);
      expect(flag('noise_floor').message).not.toMatch(/%/);
      expect(flag('noise_floor').evidence.rms_excess).toBeNull();
    }
    const below = await at(0.0018, 23);
    expect(below.flag('noise_floor').message).toMatch(/0\.9 dB below the declared noise floor/);
    expect(below.flag('noise_floor').message).not.toMatch(/%/);
    const above = await at(0.0028, 24);
    const d = above.row.above_noise_floor_db!;
    expect(d).toBeCloseTo(20 * Math.log10(0.0028 / 0.002), 3);
    expect(formula(d)).toBeCloseTo(0.429, 3);
    expect(above.flag('noise_floor').severity).toBe('fail');
    expect(above.flag('noise_floor').message).toMatch(/holds at least half the power, so every figure describes the noise more than the machine \(RMS 42\.9 % high\)/);
    expect(above.flag('noise_floor').evidence.rms_excess as number).toBeCloseTo(formula(d), 9);
  });

  it('notes where a connection comes and goes: whole windows at the floor in a channel above it as a whole', async () => {
    const floor = 40 * step;
    const hiss = gaussian(n, floor, 13);
    // A 97 Hz tone whose sensor lets go for the third second: only the chain's noise is left there.
    const x = sine(n, fs, 97, 1.4).map((v, i) => (i >= 2 * fs && i < 3 * fs ? 0 : v) + hiss[i]);
    const { flag, row } = await flagsOf(x, fs, channel({ scale, bits: 24, noise_floor: floor }));
    expect(row.above_noise_floor_db).toBeGreaterThan(40);
    // A note, not a warning: a quiet second between events or at rest reads the same, so it alone is no evidence of a fault.
    expect(flag('noise_floor').severity).toBe('note');
    expect(flag('noise_floor').evidence).toMatchObject({ windows: 4, quiet_windows: 1, quiet_stretches: 1, first_quiet_s: 2, first_quiet_end_s: 3, longest_quiet_s: 2, longest_quiet_end_s: 3 });
    expect(flag('noise_floor').message).toMatch(/as a whole; 1 of its 4 windows of 1 s within 3 dB of the floor, in one stretch from 2 s to 3 s: .*and so does a sensor that came loose or lost power: by itself no fault/);
    // The same tone held throughout: no window at the floor.
    const steady = await flagsOf(sine(n, fs, 97, 1.4).map((v, i) => v + hiss[i]), fs, channel({ scale, bits: 24, noise_floor: floor }));
    expect(steady.flag('noise_floor')).toMatchObject({ severity: 'ok', evidence: { windows: 4, quiet_windows: 0, first_quiet_s: null } });
  });

  it('leaves a tacho channel alone, whose pulses say nothing about a floor', async () => {
    const pulses = Float64Array.from({ length: n }, (_, i) => (i % 80 < 8 ? 5 : 0));
    const { flag } = await flagsOf(pulses, fs, channel({ name: 'tacho', quantity: 'voltage', unit: 'V', scale: 10, bits: 24, noise_floor: 10, pulses_per_rev: 1 }));
    expect(flag('noise_floor')).toMatchObject({ severity: 'ok', value: null, message: 'not judged on a tacho channel' });
  });

  // White noise puts 10 % of its power in the top 10 % of the band, and 1 − 2f/fs above a declared f: the aliasing flag
  // would read a dead sensor's noise as content folded from above Nyquist. With a floor declared, that share is not counted.
  it('leaves the declared floor\'s own share out of the aliasing flag: a dead sensor\'s noise is no alias, a tone above the declared band still is', async () => {
    const floor = 40 * step, declaredHz = fs / 2.56;
    const dead = gaussian(n, floor);
    const undeclared = await flagsOf(dead, fs, channel({ scale, bits: 24, max_frequency_hz: declaredHz }));
    expect(undeclared.flag('aliasing').severity).toBe('warn'); // without a floor the noise reads as content near Nyquist
    const declared = (await flagsOf(dead, fs, channel({ scale, bits: 24, max_frequency_hz: declaredHz, noise_floor: floor }))).flag('aliasing');
    expect(declared.severity).toBe('ok');
    expect(declared.evidence.top_band_power_fraction as number).toBeGreaterThan(0.08); // the raw share stays in the evidence
    expect(declared.evidence.top_band_beyond_noise_fraction as number).toBeLessThan(0.02);
    // A 3.4 kHz tone (above the declared 3125 Hz, below the top tenth of the band) holding half the floor's power.
    const toneRms = floor / Math.SQRT2;
    const withTone = sine(n, fs, 3400, Math.SQRT2 * toneRms).map((v, i) => v + dead[i]);
    const aliased = (await flagsOf(withTone, fs, channel({ scale, bits: 24, max_frequency_hz: declaredHz, noise_floor: floor }))).flag('aliasing');
    expect(aliased.severity).toBe('warn');
    expect(aliased.message).toMatch(/above the declared highest frequency 3125 Hz, up to Nyquist \(4000 Hz\) beyond what the declared noise floor puts there/);
    // The tone's share of the total power, 0.5 / 1.5, within the estimate's scatter.
    expect(aliased.evidence.above_declared_beyond_noise_fraction as number).toBeCloseTo(1 / 3, 1);
  });
});
