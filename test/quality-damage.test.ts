// Damage the flags must name, on signals the other quality tests do not cover: coarse codes in a fine container, a constant
// stretch inside a busy signal, and strong content between the declared highest frequency and Nyquist.
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import type { ChannelDeclaration } from '../spec/archive.js';
import { reduceRecording } from '../pipeline/reduce/compute.js';
import { encodeWav } from '../scripts/wav-file.js';
import type { Flag } from '../stages/quality/flag.js';
import { tempDir } from './helpers.js';

const accelerometer = (over: Partial<ChannelDeclaration> = {}): ChannelDeclaration =>
  ({ name: 'acc', quantity: 'acceleration', unit: 'm/s^2', scale: 500, offset: 0, range: [-500, 500], bits: 16, max_frequency_hz: null, ...over });

/** Seeded Gaussian samples (mulberry32 and Box–Muller), so the signals are the same on every machine. */
function gauss(seed: number) {
  let a = seed >>> 0;
  const u = () => { a = (a + 0x6d2b79f5) >>> 0; let t = Math.imul(a ^ (a >>> 15), a | 1); t ^= t + Math.imul(t ^ (t >>> 7), t | 61); return ((t ^ (t >>> 14)) >>> 0) / 4294967296; };
  return () => Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u());
}

/** Reduces one channel written as 16-bit PCM (values in engineering units) through the real reader and stages. */
async function reduce(x: Float64Array, fs: number, decl: ChannelDeclaration, encoding: 'pcm16' | 'float32' = 'pcm16') {
  const path = join(tempDir(), 'x.wav');
  writeFileSync(path, encodeWav({ sampleRate: fs, channels: [x.map((v) => (v - decl.offset) / decl.scale)], encoding }));
  const r = await reduceRecording({ recording: 'x', path, group: 'g', format: null, sampleRate: null, layout: null, channels: [decl], labels: {}, durationS: null, spec: {}, chunkFrames: 65536 });
  expect(r.reason).toBeUndefined();
  return { row: r.rows[0] as Record<string, any>, flag: (name: string) => r.quality[0].flags.find((f) => f.name === name) as Flag };
}

describe('resolution judged on the steps the data actually take', () => {
  it('8-bit codes in a 16-bit file: the quantisation SNR is that of the 8-bit step, σ / (Δ/√12) (IEEE Std 1241)', async () => {
    const g = gauss(11), fs = 10000, n = 40000;
    // Noise at 2 % of full scale rounded to 1/128 of full scale (256 codes): σ/(Δ/√12) = 0.02·128·√12 → 19.0 dB, some 2.6 of those
    // steps RMS: a peak of 10 of them, off by at most half a step, and RMS √(1 + 1/(12·2.56²)) − 1 = 0.6 % high (a note).
    const delta = 500 / 128;
    const x = Float64Array.from({ length: n }, () => Math.round(0.02 * 500 * g() / delta) * delta);
    const { row, flag } = await reduce(x, fs, accelerometer());
    let s = 0, s2 = 0;
    for (const v of x) { s += v; s2 += v * v; }
    const std = Math.sqrt(s2 / n - (s / n) ** 2);
    expect(row.step_size).toBeCloseTo(delta, 12);
    expect(row.quantisation_snr_db).toBeCloseTo(20 * Math.log10(std / (delta / Math.sqrt(12))), 9);
    let peak = 0;
    for (const v of x) peak = Math.max(peak, Math.abs(v));
    expect(flag('resolution').evidence.peak_error).toBeCloseTo(delta / 2 / peak, 12);
    expect(peak / delta).toBeGreaterThanOrEqual(10); // half a step of it is at most 5 %
    expect(flag('resolution').severity).toBe('note');
    expect(flag('resolution').message).toMatch(/coarser than the declared 16 bits/);
  });

  it('names the file\'s 16 bits, not declared ones, when the group declares no bits', async () => {
    // The same 8-bit codes in a 16-bit PCM file (WAV's bits per sample, common practice), bits left to the file.
    const g = gauss(11), delta = 500 / 128;
    const x = Float64Array.from({ length: 40000 }, () => Math.round(0.02 * 500 * g() / delta) * delta);
    const { row, flag } = await reduce(x, 10000, accelerometer({ bits: null }));
    expect(row.step_size).toBeCloseTo(delta, 12);
    expect(flag('resolution').message).toMatch(/coarser than the file's 16 bits\)/);
    expect(flag('resolution').message).not.toMatch(/declared/);
  });

  it('the same noise on every 16-bit code keeps the declared step and reads clean', async () => {
    const g = gauss(11);
    const x = Float64Array.from({ length: 40000 }, () => 0.02 * 500 * g());
    const { row, flag } = await reduce(x, 10000, accelerometer());
    expect(row.step_size).toBeCloseTo(500 / 32768, 12);
    expect(flag('resolution').severity).toBe('ok');
  });
});

describe('two levels say nothing about the converter', () => {
  // Ideal quantisation noise is LSB/√12 of the converter's step (IEEE Std 1241). A signal that takes two levels changes by
  // one amount only, so the greatest common divisor of its changes is that amount, whatever the converter's step.
  const volts = accelerometer({ name: 'v', quantity: 'voltage', unit: 'V', scale: 10, range: [-10, 10] });
  const q = 10 / 32768;

  it('a ±5 V square wave on a declared 16-bit converter keeps the declared step: 5 V against q/√12', async () => {
    const x = Float64Array.from({ length: 20000 }, (_, i) => (Math.floor(i / 50) % 2 ? 5 : -5));
    const { row, flag } = await reduce(x, 10000, volts);
    expect(row.step_size).toBe(q);
    expect(row.quantisation_snr_db).toBeCloseTo(20 * Math.log10(5 / (q / Math.sqrt(12))), 9);
    expect(flag('resolution').severity).toBe('ok');
    expect(flag('resolution').evidence.data_grid_steps).toBe(32768);
  });

  it('a sine at fs/4 with 45° phase (two values, ±0.707 of its amplitude) keeps the declared step', async () => {
    const x = Float64Array.from({ length: 20000 }, (_, i) => 5 * Math.sin(Math.PI / 2 * i + Math.PI / 4));
    const { row, flag } = await reduce(x, 10000, volts);
    const code = Math.round(5 * Math.SQRT1_2 / q);
    expect(row.step_size).toBe(q);
    expect(row.quantisation_snr_db).toBeCloseTo(20 * Math.log10(code * q / (q / Math.sqrt(12))), 9);
    expect(flag('resolution').severity).toBe('ok');
  });

  it('three levels on a coarser grid are that grid: 8-bit codes of a slow triangle in a 16-bit file still fail', async () => {
    // One 8-bit code is 256 16-bit codes; a triangle over codes −1, 0, +1 spans two of them.
    const x = Float64Array.from({ length: 20000 }, (_, i) => [-1, 0, 1, 0][Math.floor(i / 100) % 4] * 256 * q);
    const { row, flag } = await reduce(x, 10000, volts);
    expect(row.step_size).toBeCloseTo(256 * q, 12);
    expect(flag('resolution').severity).toBe('fail');
  });
});

describe('flatline: a busy signal that stops moving', () => {
  // Broadband noise of σ = 5 m/s² on 16-bit codes of 0.0153 m/s²: successive samples equal by chance about once in
  // √(2π)·σ_diff/step ≈ 1200 (Gaussian density at zero, common practice), so 0.1 s on one code (1000 repeats) is a stuck converter.
  const noise = (seed: number) => { const g = gauss(seed); return Float64Array.from({ length: 40000 }, () => 5 * g()); };
  const holdAt = (x: Float64Array, starts: number[], len: number) => { for (const s of starts) x.fill(x[s], s, s + len); return x; };

  it('four stretches of 0.1 s held at one value (10 % of the record) warn; a 1 s window that holds one reads 1 − √0.9 = 5.1 % low (derived)', async () => {
    const x = holdAt(noise(5), [5000, 13000, 22000, 31000], 1000);
    const { row, flag } = await reduce(x, 10000, accelerometer());
    expect(row.flatline_run_s).toBeCloseTo(0.1, 12);
    expect(flag('flatline').severity).toBe('warn');
    expect(flag('flatline').message).toMatch(/stuck/);
  });

  // A transfer that repeats its last value for a buffer's time, again and again (each stretch far below 0.1 s): the held
  // stretches carry nothing but a level, so band figures over the record read 1 − √(1 − share) low (derived): 5.1 % at 10 %.
  it('short held stretches again and again: 15 ms in every 100 ms (15 %) warns; 5 ms stretches, or 7.5 % of the record, do not', async () => {
    const every = (period: number, len: number) => holdAt(noise(7), Array.from({ length: 40000 / period }, (_, k) => k * period + 37), len);
    const often = await reduce(every(1000, 150), 10000, accelerometer());
    expect(often.row.flatline_run_s).toBeCloseTo(0.015, 12);
    expect(often.flag('flatline').severity).toBe('warn');
    expect(often.flag('flatline').evidence.stuck_fraction as number).toBeCloseTo(0.15, 3);
    expect(often.flag('flatline').message).toMatch(/^15 % of the recording lies in constant stretches of 0\.01 s or more \(the longest 0\.015 s\) .* read up to 7\.8 % low$/);
    const brief = await reduce(every(1000, 50), 10000, accelerometer());
    expect(brief.flag('flatline').severity).toBe('ok'); // 5 ms: below stuck_stretch_s, as a converter's own repeats may be
    const sparse = await reduce(every(2000, 150), 10000, accelerometer());
    expect(sparse.flag('flatline').evidence.stuck_fraction as number).toBeCloseTo(0.075, 3);
    expect(sparse.flag('flatline').severity).toBe('ok');
  });

  it('the same noise without held stretches is clean', async () => {
    const { flag } = await reduce(noise(5), 10000, accelerometer());
    expect(flag('flatline').severity).toBe('ok');
  });

  it('a slow noise-free swing that rests on its codes near each crest is no fault', async () => {
    // A 0.1 Hz swing of 400 steps on an ideal 16-bit converter: within ±√(step/(A·ω²)) ≈ ±0.08 s of a crest it stays on one code.
    const step = 500 / 32768;
    const x = Float64Array.from({ length: 40000 }, (_, i) => Math.round(400 * Math.sin(2 * Math.PI * 0.1 * i / 1000)) * step);
    const { row, flag } = await reduce(x, 1000, accelerometer());
    expect(row.flatline_run_s).toBeGreaterThan(0.1);
    expect(flag('flatline').severity).toBe('ok');
  });
});

describe('flatline: holds a quantiser makes, and holds a fault makes', () => {
  // IEEE Std 1241's ideal quantiser (code bins of width Q, from memory): an input moving less than one bin between samples
  // stays on its code and leaves it for the next, one step away. A held value ends with a jump of what the signal moved meanwhile.
  const strain = accelerometer({ name: 'strain', quantity: 'strain', unit: 'µε', scale: 2000, range: [-2000, 2000] });
  const q = 2000 / 32768;
  const sine = (f: number, share: number, fs: number) => Float64Array.from({ length: 60 * fs }, (_, i) => share * 2000 * Math.sin(2 * Math.PI * f * i / fs));

  it.each([[0.1, 0.003, 500], [0.1, 0.01, 200], [0.5, 0.003, 100]])('a clean %f Hz strain sine at %f of full scale sampled at %i Hz, 16-bit, rests on its codes: ok', async (f, share, fs) => {
    const { flag } = await reduce(sine(f, share, fs), fs, strain);
    const e = flag('flatline').evidence;
    expect(flag('flatline').severity).toBe('ok');
    expect(e.stuck_fraction).toBe(0);
    expect(e.data_step).toBe(q);
    expect(e.longest_run_end_jump).toBe(q); // the longest stretch, near a crest, is left for the next code
    expect(flag('resolution').severity).toBe('ok');
  });

  it('a float 10 Hz sine sampled at 100 Hz repeats a value once where two samples straddle a crest alike: ok', async () => {
    const x = Float64Array.from({ length: 6000 }, (_, i) => Math.sin(2 * Math.PI * 10 * i / 100));
    const { flag } = await reduce(x, 100, accelerometer({ scale: 1, range: null, bits: null }), 'float32');
    expect(flag('flatline').evidence.longest_run_samples).toBe(2);
    expect(flag('flatline').severity).toBe('ok');
  });

  // A tone with broadband noise, 16-bit at 1 kHz: a transfer that repeats its last value for 25 samples every 200 (12.5 % of the record).
  const busy = (seed: number) => { const g = gauss(seed); return Float64Array.from({ length: 60000 }, (_, i) => 80 * Math.sin(2 * Math.PI * 37 * i / 1000) + 10 * g()); };
  it('a transfer repeating its last value every 200 samples warns, its message quoting the evidence', async () => {
    const x = busy(3);
    for (let at = 150; at < x.length; at += 200) x.fill(x[at - 1], at, at + 24);
    const { flag } = await reduce(x, 1000, accelerometer());
    const f = flag('flatline'), e = f.evidence;
    expect(f.severity).toBe('warn');
    expect(e.stuck_fraction as number).toBeCloseTo(0.125, 3);
    expect(e.hold_end_jump_steps as number).toBeGreaterThan(100);
    expect(f.message).toContain(`(${Number(((e.repeat_fraction_between_holds as number) * 100).toPrecision(3))} % repeats)`);
    expect(f.message).toMatch(/^12\.5 % of the recording lies in constant stretches .* read up to 6\.46 % low$/); // 1 − √0.875 (derived)
  });

  it('a stuck converter still warns: 0.2 s on one code in the busy signal, 1.5 s in the slow strain sine', async () => {
    const x = busy(4);
    x.fill(x[30000], 30000, 30200);
    const fast = await reduce(x, 1000, accelerometer());
    expect(fast.flag('flatline').severity).toBe('warn');
    expect(fast.flag('flatline').message).toContain(`(${Number(((fast.flag('flatline').evidence.repeat_fraction as number) * 100).toPrecision(3))} % repeats)`);
    const slow = sine(0.1, 0.01, 200);
    slow.fill(slow[6100], 6100, 6400); // near a zero crossing (not at it: zeros are the dropout flag's), where the sine moves about a step a sample
    const held = await reduce(slow, 200, strain);
    expect(held.flag('flatline').severity).toBe('warn');
    expect(held.flag('flatline').message).toMatch(/stays exactly constant for 1\.5 s/);
    expect(held.flag('flatline').evidence.longest_run_end_jump as number).toBeGreaterThan(100 * q);
  });
});

describe('aliasing: content between the declared highest frequency and Nyquist', () => {
  it('a strong 7.4 kHz tone sampled at 12.8 kHz appears at |7400 − 12800| = 5400 Hz (sampling theorem), above the declared 5 kHz: warns', async () => {
    const fs = 12800, n = 51200;
    // What the converter keeps of it: a 5.4 kHz tone of amplitude 4 beside in-band content of amplitude 2 at 1 kHz, so
    // 4²/2 / (4²/2 + 2²/2) = 80 % of the power lies above the declaration (tone power A²/2).
    const x = Float64Array.from({ length: n }, (_, i) => 2 * Math.sin(2 * Math.PI * 1000 * i / fs) + 4 * Math.sin(2 * Math.PI * 5400 * i / fs));
    const { flag } = await reduce(x, fs, accelerometer({ max_frequency_hz: 5000 }));
    expect(flag('aliasing').severity).toBe('warn');
    expect(flag('aliasing').evidence.above_declared_power_fraction as number).toBeCloseTo(0.8, 2);
    expect(flag('aliasing').message).toMatch(/above the declared highest frequency/);
  });

  it('the in-band tone alone, at 2.56 × its declared highest frequency, reads clean', async () => {
    const fs = 12800;
    const x = Float64Array.from({ length: 51200 }, (_, i) => 2 * Math.sin(2 * Math.PI * 1000 * i / fs));
    const { flag } = await reduce(x, fs, accelerometer({ max_frequency_hz: 5000 }));
    expect(flag('aliasing').severity).toBe('ok');
  });
});

describe('a stretch of exact zeros is named once', () => {
  it('0.3 s of zeros in busy noise is a dropout (logger gap), not also a stuck converter', async () => {
    const g = gauss(9);
    const x = Float64Array.from({ length: 40000 }, (_, i) => (i >= 17000 && i < 20000 ? 0 : 5 * g()));
    const { flag } = await reduce(x, 10000, accelerometer());
    expect(flag('dropout').severity).toBe('warn');
    expect(flag('flatline').severity).toBe('ok');
  });
});

describe('the grid of the data, not the size of its changes', () => {
  it('a sawtooth stepping 3 codes a sample and wrapping over all 4096 codes of a 12-bit span keeps the 16-bit step: gcd(3, 4093) = 1', async () => {
    const step = 500 / 32768;
    const x = Float64Array.from({ length: 20000 }, (_, i) => ((3 * i) % 4096 - 2048) * step);
    const { row, flag } = await reduce(x, 10000, accelerometer());
    expect(row.step_size).toBeCloseTo(step, 12);
    expect(row.resolution_bits).toBeCloseTo(Math.log2(4095), 9);
    expect(flag('resolution').severity).toBe('ok');
  });
});

describe('a tacho channel at rest between its pulses', () => {
  // A once-per-revolution pulse of 1 ms at 300 rpm, 0 V between pulses, as a digital input stores it (common practice:
  // a TTL-level shaft encoder or optical probe); 0.2 s of exact zeros between pulses is the signal, not a lost stretch.
  const fs = 25600, x = Float64Array.from({ length: 4 * fs }, (_, i) => (i % (fs / 5) < fs / 1000 ? 5 : 0));
  const tacho = accelerometer({ name: 'tacho', quantity: 'voltage', unit: 'V', scale: 10, range: [-10, 10], pulses_per_rev: 1, trigger_level: 2.5, trigger_hysteresis: null });

  it('reads no dropout on the tacho channel, and shaft speed 300 rpm from its pulses', async () => {
    const { row, flag } = await reduce(x, fs, tacho);
    expect(flag('dropout').severity).toBe('ok');
    expect(row.zero_run_s).toBeGreaterThan(0.19);
    expect(Object.entries(row).find(([k]) => /rpm/.test(k))?.[1]).toBeCloseTo(300, 6);
  });

  it('does not read the ringing of its pulse edges as a missed peak', async () => {
    // Pulses two samples wide (78 µs): their band-limited reconstruction peaks between the two samples, far above them
    // (derived: two equal samples interpolated at their midpoint, Σ sinc weights ≈ 1.27). The figure is kept, not judged.
    const narrow = Float64Array.from({ length: 4 * fs }, (_, i) => (i % (fs / 5) < 2 ? 5 : 0));
    const { row, flag } = await reduce(narrow, fs, tacho);
    expect(row.peak_shortfall).toBeGreaterThan(0.1);
    expect(flag('peak_capture').severity).toBe('ok');
    expect((await reduce(narrow, fs, accelerometer({ scale: 10, range: [-10, 10] }))).flag('peak_capture').severity).not.toBe('ok');
  });

  it('a slow shaft (40 rpm: 1.5 s between pulses) reads no flatline on its tacho channel, and does on any other channel', async () => {
    const slow = Float64Array.from({ length: 6 * fs }, (_, i) => (i % (1.5 * fs) < fs / 1000 ? 5 : 0));
    expect((await reduce(slow, fs, tacho)).flag('flatline').severity).toBe('ok');
    expect((await reduce(slow, fs, accelerometer({ scale: 10, range: [-10, 10] }))).flag('flatline').severity).toBe('warn');
  });

  it('the same zeros on a channel that is not a tacho still warn of lost data', async () => {
    const { flag } = await reduce(x, fs, accelerometer({ scale: 10, range: [-10, 10] }));
    expect(flag('dropout').severity).toBe('warn');
  });
});

describe('gravity on a DC-coupled accelerometer', () => {
  it('the offset warning says the mean is 1 g and how to take it out; another offset gets no such hint', async () => {
    const g = gauss(5), g0 = 9.80665; // standard gravity (ISO 80000-3)
    const carrying = Float64Array.from({ length: 40000 }, () => g0 + 0.5 * g());
    const withGravity = (await reduce(carrying, 10000, accelerometer())).flag('offset');
    expect(withGravity.severity).toBe('warn');
    expect(withGravity.message).toContain(`about 1 g: a DC-coupled accelerometer carrying gravity; add ${-g0} to the channel's offset`);
    const biased = Float64Array.from({ length: 40000 }, () => 3 + 0.5 * g());
    const other = (await reduce(biased, 10000, accelerometer())).flag('offset');
    expect(other.severity).toBe('warn');
    expect(other.message).not.toContain('gravity');
  });
});
