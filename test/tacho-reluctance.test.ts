// A variable-reluctance (magnetic) tacho under the undeclared trigger, against signals with a planted rotation made with numpy by
// test/fixtures/make-vr-vectors.py: each pulse the time derivative of a Gaussian flux bump in shaft angle (common practice for a
// VR pickup's shape), resting at 0 V between pulses, its lobes growing with the speed. The speed of pulses at known times is
// 60 × revolutions / time (common practice); the pulses' centres, where they cross the rest level, are stored with the vectors.
import { describe, expect, it } from 'vitest';
import { reduceRecording } from '../pipeline/reduce/compute.js';
import type { ChannelDeclaration } from '../spec/archive.js';
import { lobeGaps, pairedLobes, restTrigger, triggerFrom } from '../stages/dsp/trigger-level.js';
import type { Flag } from '../stages/quality/flag.js';
import { fixture, readJson } from './helpers.js';
import { channel } from './reduce-signal.js';

interface Case { file: string; seconds: number; pulses_per_rev: number; rpm_start: number; rpm_end: number; centres_s: number[]; revolutions: number }
const ref = readJson(fixture('vr-vectors.json')) as { fs: number; cases: Record<string, Case> };

/** As declared for a 16-bit acquisition of ±10 V, the trigger left to be found. */
const TACHO: ChannelDeclaration = channel({ name: 'tacho', quantity: 'voltage', unit: 'V', scale: 10, range: [-10, 10], bits: 16, pulses_per_rev: 1, trigger_level: null, trigger_hysteresis: null });

async function tacho(name: string) {
  const c = ref.cases[name];
  const decl = { ...TACHO, pulses_per_rev: c.pulses_per_rev ?? 1 };
  const r = await reduceRecording({ recording: name, path: fixture(c.file), group: 'g', format: null, sampleRate: null, layout: null, channels: [decl], labels: {}, durationS: null, spec: { windows: { length_s: 1 } }, chunkFrames: 8191 });
  expect(r.reason).toBeUndefined();
  const flag = r.quality[0].flags.find((f) => f.name === 'pulse_train') as Flag;
  return { c, row: r.rows[0] as Record<string, number | null>, flag, notes: r.messages.join('\n'), windows: r.tables.windows };
}

const relative = (got: number | null, want: number) => Math.abs((got as number) / want - 1);
/** Speeds of every revolution from the planted centres: ppr consecutive intervals each. */
const revolutionRpm = (centres: number[], ppr: number) => centres.slice(ppr).map((t, k) => 60 / (t - centres[k]));

describe('a variable-reluctance tacho, trigger undeclared', () => {
  it('steady 1500 rpm, resting at 0 V between 3 V bipolar pulses: 1500 rpm, the planted revolutions, no fault, ok', async () => {
    const { c, row, flag, notes, windows } = await tacho('vr_steady');
    for (const v of [row.speed_mean_rpm, row.speed_min_rpm, row.speed_max_rpm]) expect(relative(v, 1500)).toBeLessThan(5e-4);
    expect(row.revolutions).toBe(c.revolutions);
    expect([row.pulses_missing, row.pulses_extra]).toEqual([0, 0]);
    for (const w of windows.slice(1, -1)) expect(relative(w.speed_rpm as number, 1500)).toBeLessThan(5e-4);
    expect(notes).toMatch(/tacho edges timed at -?0(\.0\d*)? V, .*both ways.*a pulse rises through the rest level between its lobes/);
    expect(flag.severity).toBe('ok');
  });

  it('the pickup\'s leads swapped (positive lobe first) under 0.1 V of 50 Hz hum: edges fall between the lobes, 1500 rpm', async () => {
    const { c, row, flag, notes } = await tacho('vr_reversed_hum');
    for (const v of [row.speed_mean_rpm, row.speed_min_rpm, row.speed_max_rpm]) expect(relative(v, 1500)).toBeLessThan(5e-4);
    expect(row.revolutions).toBe(c.revolutions);
    expect([row.pulses_missing, row.pulses_extra]).toEqual([0, 0]);
    expect(notes).toMatch(/tacho edges timed falling through .*a pulse falls through the rest level between its lobes/);
    expect(flag.severity).toBe('ok');
    expect(flag.message).toBe('the good pulse intervals cover 100 % of the recording, with no pulse fault');
  });

  it('a run-up 300 → 2400 rpm, 2 pulses a revolution, lobes growing 0.15 → 1.2 V: the trigger found in the first second holds to the end', async () => {
    const { c, row, flag, notes } = await tacho('vr_runup');
    const ppr = c.pulses_per_rev, t = c.centres_s;
    expect(row.revolutions).toBe(c.revolutions);
    expect([row.pulses_missing, row.pulses_extra, flag.evidence.irregular]).toEqual([0, 0, 0]);
    // Edges at the crossing between the lobes keep their phase as the pulses grow: the planted revolutions' speeds.
    expect(relative(row.speed_mean_rpm, (60 * (t.length - 1)) / (ppr * (t.at(-1)! - t[0])))).toBeLessThan(5e-4);
    const revs = revolutionRpm(t, ppr);
    // The slowest revolution has the smallest lobes (0.15 V): 0.01 V of noise over their slope at the crossing, 1.65 × 0.15 V per
    // 0.01 revolution, moves an edge by 4·10⁻⁴ of a revolution RMS (derived), so that revolution's speed is held within 2·10⁻³.
    expect(relative(row.speed_min_rpm, Math.min(...revs))).toBeLessThan(2e-3);
    expect(relative(row.speed_max_rpm, Math.max(...revs))).toBeLessThan(5e-4);
    expect(notes).toMatch(/found from the first second/);
    expect(notes).not.toMatch(/trigger level followed/);
    expect(flag.severity).toBe('ok');
  });

  it('noise alone (Gaussian, and Laplace: heavier-tailed), and noise under 50 Hz hum, hold no pulse train: the flag fails, says what the channel looked like and suggests trigger_level', async () => {
    for (const name of ['noise', 'hum_noise', 'laplace_noise']) {
      const { row, flag, notes } = await tacho(name);
      expect(row.speed_mean_rpm).toBeNull();
      expect(row.revolutions).toBeNull();
      expect(flag.severity).toBe('fail');
      expect(flag.message).toMatch(/^no pulse train found: no second holds a pulse standing clear of the noise/);
      expect(flag.message).toMatch(/the clearest second, from \d+ s, rests at -?0(\.0\d*)? V with noise of 0\.0\d+ V \(a robust standard deviation\) and reaches .* times the noise, (where a pulse must reach over 10 times|but not as a pulse's two lobes)/);
      expect(flag.message).toMatch(/where pulses are there but small, trigger_level between the rest level and their peak/);
      expect(notes).toMatch(/no second holds a pulse standing clear of its noise of the 3 s read \(the clearest second/);
    }
  });
});

describe('a signal resting at a level with pulses leaving it', () => {
  const fs = 12800, w = 0.01;
  /** One second at 25 rev/s of the pulse shape above, with no noise; `sign` −1 swaps the lobes. */
  const pulses = (sign: number) => Float64Array.from({ length: fs }, (_, i) => {
    const th = (25 * i) / fs, d = th - Math.round(th - 0.37) - 0.37;
    return sign * (d / w) * Math.exp(0.5 - (d * d) / (2 * w * w));
  });

  it('bipolar: the rest level, armed and fired at half the smaller lobe, rising or falling by which lobe comes first', () => {
    for (const sign of [1, -1]) {
      const x = pulses(sign);
      expect(triggerFrom(x)).toMatchObject({ shape: 'bipolar' });
      const found = restTrigger(x, 'smoothed')!;
      expect(found.trigger.level).toBeCloseTo(0, 12);
      // Lobes of 1 at θ_k ∓ w, sampled 5 times a w and through the median of three: a few per cent below.
      expect(found.trigger.hysteresis).toBeGreaterThan(0.95);
      expect(found.trigger.hysteresis).toBeLessThanOrEqual(1);
      expect(pairedLobes(lobeGaps(x, 0, 0.5), fs)).toEqual({ falling: sign < 0 });
      expect(found.trigger.falling ?? false).toBe(sign < 0);
    }
  });

  it('lobes pair when one follows the other within a quarter of the wait for the next pulse, or of the rest of a stretch holding one', () => {
    expect(pairedLobes({ rising: 10, falling: 500 }, 1000)).toEqual({ falling: false });
    expect(pairedLobes({ rising: 500, falling: 10 }, 1000)).toEqual({ falling: true });
    expect(pairedLobes({ rising: 300, falling: 500 }, 1000)).toBeNull();
    expect(pairedLobes({ rising: 10, falling: NaN }, 1000)).toEqual({ falling: false });
    expect(pairedLobes({ rising: NaN, falling: 400 }, 1000)).toBeNull();
    expect(pairedLobes({ rising: NaN, falling: NaN }, 1000)).toBeNull();
  });
});
