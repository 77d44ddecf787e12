// When a tacho's speed is withheld: exactly where its pulse_train flag fails for faults, at the spec's fail_fault_ratio, and then
// with every figure resting on the train (revolutions, pulse counts, the windows' speed, the order figures). The speed of a train
// of known period is 60 / (period × pulses_per_rev) rpm (common practice); a tone locked to order n of the shaft has its RMS A/√2
// in that order's band.
import { describe, expect, it } from 'vitest';
import type { ChannelDeclaration } from '../spec/archive.js';
import type { ReductionSpec } from '../spec/reduction.js';
import type { Flag } from '../stages/quality/flag.js';
import { channel, reduceChannels } from './reduce-signal.js';

const TACHO = channel({ name: 'tacho', quantity: 'voltage', unit: 'V', scale: 10, pulses_per_rev: 1, trigger_level: null, trigger_hysteresis: null });
const ACC = channel({ name: 'acc', scale: 100 });

async function reduce(signals: Float64Array[], decls: ChannelDeclaration[], fs: number, spec: ReductionSpec) {
  const { result: r, row } = await reduceChannels(signals, decls, fs, spec);
  const flag = r.quality.find((q) => q.channel === 'tacho')!.flags.find((f) => f.name === 'pulse_train') as Flag;
  return { row, flag, windows: r.tables.windows.filter((w) => w.channel === 'tacho'), notes: r.messages.join('\n') };
}

/** A 5 V trapezoid at pulse phase u: linear edges 0.01 long, high for 0.3; it crosses 2.5 V at u = 0.005. */
const trapezoid = (u: number) => 5 * (u < 0.01 ? u / 0.01 : u < 0.3 ? 1 : u < 0.31 ? 1 - (u - 0.3) / 0.01 : 0);

describe('the speed withheld at the pulse_train flag\'s fail_fault_ratio', () => {
  // 1200 rpm, one pulse a revolution, every sixth pulse missing: of each 6 intervals, 4 are good and 2 make one gap of one
  // missing pulse, so 1 missing per 4 good intervals (0.25), covering 4/6 of the time.
  const fs = 12800, n = 10 * fs, A = 2, RPM = 1200;
  const tacho = Float64Array.from({ length: n }, (_, i) => { const p = 0.3 + (RPM / 60) * (i / fs), k = Math.floor(p); return k % 6 === 5 ? 0 : trapezoid(p - k); });
  const acc = Float64Array.from({ length: n }, (_, i) => A * Math.sin(2 * Math.PI * 2 * (0.3 + (RPM / 60) * (i / fs)))); // order 2
  const spec = (ratio: number): ReductionSpec => ({ windows: { length_s: 1 }, spectrum: {}, orders: { orders: [2], width: 0.5 }, quality: { pulse_train: { fail_fault_ratio: ratio } } } as ReductionSpec);
  // Pulses k = 1 … 200 rise within the recording, at (k − 0.295) / 20 s; those with k mod 6 = 5 are missing.
  const present = Array.from({ length: 200 }, (_, j) => j + 1).filter((k) => k % 6 !== 5);
  const good = present.filter((k, j) => present[j + 1] === k + 1).length;

  it('missing pulses at 0.25 of the good intervals, under a fail_fault_ratio of 0.3: the speed is given, 1200 rpm, and the flag does not fail', async () => {
    const { row, flag, windows } = await reduce([tacho, acc], [TACHO, ACC], fs, spec(0.3));
    const t = row('tacho');
    for (const v of [t.speed_mean_rpm, t.speed_min_rpm, t.speed_max_rpm]) expect(Math.abs((v as number) / RPM - 1)).toBeLessThan(1e-6);
    expect(t.revolutions).toBe(good);
    expect(t.pulses_missing).toBe(present.length - 1 - good);
    for (const w of windows) expect(Math.abs((w.speed_rpm as number) / RPM - 1)).toBeLessThan(1e-6);
    expect((row('acc').order_2_rms as number) / (A / Math.SQRT2)).toBeCloseTo(1, 3);
    expect(flag.severity).toBe('warn');
  });

  it('the same train under a fail_fault_ratio of 0.2: the flag fails, and speed, revolutions, pulse counts, windows\' speed and orders are null', async () => {
    const { row, flag, windows, notes } = await reduce([tacho, acc], [TACHO, ACC], fs, spec(0.2));
    const t = row('tacho');
    for (const k of ['speed_mean_rpm', 'speed_min_rpm', 'speed_max_rpm', 'revolutions', 'pulses_missing', 'pulses_extra']) expect(t[k], k).toBeNull();
    expect(windows.length).toBe(10);
    for (const w of windows) expect(w.speed_rpm).toBeNull();
    expect(row('acc').order_2_rms).toBeNull();
    expect(flag.severity).toBe('fail');
    expect(flag.message).toMatch(/missing and irregular pulses beyond 20 % of the good intervals\), so no speed is given \(nor revolutions or pulse counts\)/);
    expect(flag.evidence.good_intervals).toBe(good);
    expect(notes).toMatch(/beyond fail_fault_ratio 0\.2 of them, so the pulse train does not hold together/);
  });
});
