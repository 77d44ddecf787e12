// A tacho channel without pulses: a signal that moves but holds no pulse (a sensor unplugged: Gaussian noise) fails the
// pulse_train flag, found trigger or declared, while a slow shaft whose short recording holds one pulse, or two, keeps its verdict.
// The speed of a train of known period is 60 / (period × pulses_per_rev) rpm (common practice).
import { describe, expect, it } from 'vitest';
import type { ChannelDeclaration } from '../spec/archive.js';
import type { Flag } from '../stages/quality/flag.js';
import { uniform } from './dsp-signals.js';
import { channel, reduce } from './reduce-signal.js';

const TACHO: ChannelDeclaration = channel({ name: 'tacho', quantity: 'voltage', unit: 'V', scale: 10, pulses_per_rev: 1, trigger_level: null, trigger_hysteresis: null });

/** Gaussian noise of RMS `sigma` (Box–Muller over a seeded uniform generator). */
function gaussian(n: number, sigma: number, seed = 17): Float64Array {
  const u = uniform(seed);
  return Float64Array.from({ length: n }, () => sigma * Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u()));
}

/** 5 V pulses 0.2 s wide with linear edges of 0.01 s, rising through 2.5 V at each of `at` (s), on 0.05 V of noise. */
function pulsesAt(at: number[], n: number, fs: number): Float64Array {
  const x = gaussian(n, 0.05, 3);
  for (let i = 0; i < n; i++) {
    for (const t0 of at) {
      const u = i / fs - (t0 - 0.005);
      x[i] += 5 * (u < 0 ? 0 : u < 0.01 ? u / 0.01 : u < 0.2 ? 1 : u < 0.21 ? 1 - (u - 0.2) / 0.01 : 0);
    }
  }
  return x;
}

async function tacho(x: Float64Array, fs: number, decl: Partial<ChannelDeclaration> = {}) {
  const { row, result } = await reduce(x, fs, {}, { ...TACHO, ...decl });
  const flag = result.quality[0].flags.find((f) => f.name === 'pulse_train') as Flag;
  return { row: row as Record<string, number | null>, flag };
}

describe('a tacho channel whose pulses cannot be found', () => {
  const fs = 12800, n = 10 * fs;

  it('noise alone (a sensor unplugged), trigger undeclared: no pulse train found, the flag fails and says what to check', async () => {
    const { row, flag } = await tacho(gaussian(n, 0.05), fs);
    expect(row.speed_mean_rpm).toBeNull();
    expect(flag.severity).toBe('fail');
    expect(flag.message).toMatch(/^no pulse train found: no second holds a pulse standing clear of the noise/);
    expect(flag.message).toMatch(/check the tacho's wiring and supply, declare trigger_level and trigger_hysteresis .*, and pulses_per_rev/);
  });

  it('noise alone under a declared trigger of 2.5 V it never crosses: the flag fails, naming the trigger and the signal\'s range', async () => {
    const { row, flag } = await tacho(gaussian(n, 0.05), fs, { trigger_level: 2.5, trigger_hysteresis: 2 });
    expect(row.speed_mean_rpm).toBeNull();
    expect(flag.severity).toBe('fail');
    expect(flag.message).toMatch(/^no pulse train found: no edge crossed the trigger \(edges timed at 2\.5 V, hysteresis 2 V \(declared\)\) while the signal ranged -0\.\d+ to 0\.\d+ V/);
    expect(flag.message).toMatch(/the declared trigger_level and trigger_hysteresis against that range, and pulses_per_rev/);
  });

  it('noise alone, trigger found or declared: revolutions and the pulse counts are null, as the speed, and the note says so; a shaft at rest and a lone pulse keep their counts of 0', async () => {
    for (const decl of [{}, { trigger_level: 2.5, trigger_hysteresis: 2 }]) {
      const { row, result } = await reduce(gaussian(n, 0.05), fs, {}, { ...TACHO, ...decl });
      for (const c of ['revolutions', 'pulses_missing', 'pulses_extra']) expect(row[c], `${c}, ${JSON.stringify(decl)}`).toBeNull();
      expect(result.messages.join('\n')).toMatch(/tacho: .*revolutions and the pulse counts are left empty \(null\)/);
    }
    // No pulse in a still signal, or one pulse: nothing was missed, the counts are known.
    const rest = await tacho(new Float64Array(n).fill(0.2), fs, { trigger_level: 2.5, trigger_hysteresis: 2 });
    expect([rest.row.revolutions, rest.row.pulses_missing, rest.row.pulses_extra]).toEqual([0, 0, 0]);
    const lone = await tacho(pulsesAt([2.2], 5 * fs, fs), fs);
    expect([lone.row.revolutions, lone.row.pulses_missing, lone.row.pulses_extra]).toEqual([0, 0, 0]);
  });

  it('a shaft at rest under a declared trigger (a constant level) is not failed: no pulse is no wrong speed', async () => {
    const { flag } = await tacho(new Float64Array(n).fill(0.2), fs, { trigger_level: 2.5, trigger_hysteresis: 2 });
    expect(flag.severity).not.toBe('fail');
  });
});

describe('a slow shaft in a short recording keeps its verdict', () => {
  const fs = 12800, n = 5 * fs;

  it('one pulse in 5 s (a shaft below 12 rpm): no speed, a warning, not a failure', async () => {
    for (const decl of [{}, { trigger_level: 2.5, trigger_hysteresis: 2 }]) {
      const { row, flag } = await tacho(pulsesAt([2.2], n, fs), fs, decl);
      expect(row.speed_mean_rpm).toBeNull();
      expect(flag.severity).toBe('warn');
      expect(flag.message).toMatch(/no two consecutive good pulses/);
    }
  });

  it('two pulses 3 s apart in 5 s: 60 / 3 = 20 rpm', async () => {
    const { row, flag } = await tacho(pulsesAt([0.9, 3.9], n, fs), fs);
    expect(Math.abs((row.speed_mean_rpm as number) / 20 - 1)).toBeLessThan(1e-4);
    expect(flag.severity).not.toBe('fail');
  });
});
