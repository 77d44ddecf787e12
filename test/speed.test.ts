// Shaft speed from a tacho channel and order figures of the recording's other channels, through the real per-recording path
// (a float WAV on disk → reduceRecording) and the command line, against closed-form pulse trains and tones.
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { describe, expect, it } from 'vitest';
import type { ChannelDeclaration } from '../spec/archive.js';
import type { ReductionSpec } from '../spec/reduction.js';
import { quern, readJson, sampleArchiveCopy, tempDir } from './helpers.js';
import { reduceChannels } from './reduce-signal.js';

const TACHO: ChannelDeclaration = { name: 'tacho', quantity: 'voltage', unit: 'V', scale: 10, offset: 0, range: null, bits: null, max_frequency_hz: null, pulses_per_rev: 1, trigger_level: null, trigger_hysteresis: null };
const ACC: ChannelDeclaration = { name: 'acc', quantity: 'acceleration', unit: 'm/s^2', scale: 100, offset: 0, range: null, bits: null, max_frequency_hz: null };

/** Reduces channels (engineering units) held in a float32 WAV, as the pipeline would. */
async function reduce(signals: Float64Array[], decls: ChannelDeclaration[], fs: number, spec: ReductionSpec) {
  const { result: r, row } = await reduceChannels(signals, decls, fs, spec);
  return { row, result: r, notes: r.messages.join('\n') };
}

/** A shaft whose rate rises linearly, f(t) = f0 + a·t rev/s: its angle in revolutions is f0·t + a·t²/2 (closed form). */
const shaft = (f0: number, a: number) => ({
  angle: (t: number) => f0 * t + (a * t * t) / 2,
  /** When the angle reaches `revs` (the positive root of the quadratic). */
  when: (revs: number) => (a === 0 ? revs / f0 : (-f0 + Math.sqrt(f0 * f0 + 2 * a * revs)) / a),
});

const EDGE = 0.02; // width of a pulse edge, in pulse periods
const START = 0.3; // pulse phase at t = 0

/** A 5 V pulse at pulse phase u ∈ [0, 1): high for 10 %, raised-cosine edges; it crosses 2.5 V at u = EDGE/2 on the way up. */
function pulse(u: number, high = 0.1): number {
  if (u < EDGE) return 2.5 * (1 - Math.cos((Math.PI * u) / EDGE));
  if (u < high) return 5;
  if (u < high + EDGE) return 2.5 * (1 + Math.cos((Math.PI * (u - high)) / EDGE));
  return 0;
}

/** The tacho signal of `perRev` evenly spaced pulses; `shape(k, u)` may change pulse k (drop it, add a stray one). */
function tachoSignal(n: number, fs: number, angle: (t: number) => number, perRev: number, shape = (_k: number, u: number) => pulse(u)) {
  return Float64Array.from({ length: n }, (_, i) => {
    const phase = perRev * angle(i / fs) + START;
    return shape(Math.floor(phase), phase - Math.floor(phase));
  });
}

/** Times of the rising 2.5 V crossings of pulses 1, 2, … that lie in [0, end): closed form from the angle. */
function edgeTimes(when: (revs: number) => number, perRev: number, end: number): number[] {
  const out: number[] = [];
  for (let k = 1; ; k++) {
    const t = when((k + EDGE / 2 - START) / perRev);
    if (t >= end) return out;
    out.push(t);
  }
}

const relative = (got: number | null, want: number) => Math.abs((got as number) / want - 1);

describe('shaft speed from a tacho channel (pulses_per_rev)', () => {
  it('recovers a slowly ramping speed within 0.05 %: mean, slowest and fastest revolution, and per window (closed-form pulse times)', async () => {
    const fs = 12800, seconds = 10, n = fs * seconds;
    const s = shaft(25, 0.5); // 1500 → 1800 rpm over 10 s
    for (const perRev of [1, 2]) {
      const { row, result } = await reduce([tachoSignal(n, fs, s.angle, perRev)], [{ ...TACHO, pulses_per_rev: perRev }], fs, { windows: { length_s: 1 } });
      const t = edgeTimes(s.when, perRev, seconds - 0.002);
      const r = row('tacho');
      expect(r.revolutions).toBe((t.length - 1) / perRev);
      expect(r.pulses_missing).toBe(0);
      expect(r.pulses_extra).toBe(0);
      expect(relative(r.speed_mean_rpm, (60 * (t.length - 1)) / (perRev * (t.at(-1)! - t[0])))).toBeLessThan(5e-4);
      expect(relative(r.speed_min_rpm, 60 / (t[perRev] - t[0]))).toBeLessThan(5e-4);
      expect(relative(r.speed_max_rpm, 60 / (t.at(-1)! - t.at(-1 - perRev)!))).toBeLessThan(5e-4);
      // Each window's speed is the mean rate over the part of it the pulses cover: revolutions turned / time.
      const rows = result.tables.windows;
      expect(rows.length).toBe(seconds);
      for (const w of rows) {
        const a = Math.max(w.window_start_s as number, t[0]), b = Math.min((w.window_start_s as number) + 1, t.at(-1)!);
        expect(relative(w.speed_rpm as number, (60 * (s.angle(b) - s.angle(a))) / (b - a))).toBeLessThan(5e-4);
      }
    }
  });

  it('finds a missing pulse and an extra one, with their times, and leaves them out of the speed', async () => {
    const fs = 12800, seconds = 10, n = fs * seconds;
    const s = shaft(25, 0); // 1500 rpm
    // Pulse 100 never comes (dirty tape); a stray pulse rides in the middle of pulse period 150.
    const shape = (k: number, u: number) => (k === 100 ? 0 : k === 150 && u >= 0.5 ? pulse(u - 0.5, 0.05) : pulse(u));
    const { row, notes } = await reduce([tachoSignal(n, fs, s.angle, 1, shape)], [TACHO], fs, { windows: { length_s: 1 } });
    const t = edgeTimes(s.when, 1, seconds - 0.002);
    const r = row('tacho');
    expect(r.pulses_missing).toBe(1);
    expect(r.pulses_extra).toBe(1);
    // The two intervals around the missing pulse make one gap, left out; the stray pulse splits no interval.
    expect(r.revolutions).toBe(t.length - 1 - 2);
    expect(notes).toMatch(new RegExp(`1 tacho pulse\\(s\\) missing near ${(t[99]).toFixed(3)}`)); // pulse 100 is the 100th edge
    expect(notes).toMatch(new RegExp(`1 extra tacho pulse\\(s\\) at ${s.when(150 + 0.5 + EDGE / 2 - START).toFixed(3)}`));
    for (const v of [r.speed_mean_rpm, r.speed_min_rpm, r.speed_max_rpm]) expect(relative(v, 1500)).toBeLessThan(5e-4);
  });

  it('counts each slow, noisy edge once thanks to the hysteresis; without hysteresis the same signal chatters', async () => {
    const fs = 12800, seconds = 5, n = fs * seconds;
    const s = shaft(20, 0);
    let seed = 12345;
    const uniform = () => ((seed = (Math.imul(seed, 1103515245) + 12345) >>> 0) / 4294967296);
    // Edges a fifth of a period long with ±0.3 V of uniform noise: the level is crossed many times on each edge.
    const slow = (u: number) => (u < 0.2 ? 2.5 * (1 - Math.cos((Math.PI * u) / 0.2)) : u < 0.5 ? 5 : u < 0.7 ? 2.5 * (1 + Math.cos((Math.PI * (u - 0.5)) / 0.2)) : 0);
    const x = tachoSignal(n, fs, s.angle, 1, (_k, u) => slow(u) + 0.6 * (uniform() - 0.5));
    const { row } = await reduce([x], [TACHO], fs, {});
    // Pulse k counts once it passes the upper threshold (2.5 + 1.1 V, near phase k + 0.13) before the recording ends.
    let edges = 0;
    while (s.when(edges + 1 + 0.14 - START) < seconds) edges++;
    expect(row('tacho').pulses_extra).toBe(0);
    expect(row('tacho').revolutions).toBe(edges - 1);
    expect(relative(row('tacho').speed_mean_rpm, 1200)).toBeLessThan(5e-4);
    const bare = await reduce([x], [{ ...TACHO, trigger_level: 2.5, trigger_hysteresis: 0 }], fs, {});
    expect(bare.notes).toMatch(/extra tacho pulse|irregular tacho interval/);
  });

  it('a lone spike in the first second does not set the trigger level: the speed is found, the spike counted as an extra pulse', async () => {
    const fs = 12800, seconds = 5, n = fs * seconds;
    const s = shaft(25, 0); // 1500 rpm
    const x = tachoSignal(n, fs, s.angle, 1);
    const at = Math.round(s.when(10 + 0.6 - START) * fs); // between pulses 10 and 11, low level
    x[at] = 50; // one sample of interference, ten times the pulse height
    const { row, notes } = await reduce([x], [TACHO], fs, {});
    expect(notes).toMatch(/tacho edges timed at 2\.5 V, hysteresis 2 V, found from the first second/);
    expect(row('tacho').pulses_extra).toBe(1);
    expect(relative(row('tacho').speed_mean_rpm, 1500)).toBeLessThan(5e-4);
  });

  it('a flat tacho gives no speed and says to declare the trigger', async () => {
    const fs = 1000;
    const { row, notes } = await reduce([new Float64Array(fs * 3).fill(1)], [TACHO], fs, {});
    expect(row('tacho').speed_mean_rpm).toBeNull();
    expect(row('tacho').revolutions).toBe(0);
    expect(notes).toMatch(/tacho signal flat over the first second; .* declare trigger_level/);
  });
});

describe('order figures from the Welch spectrum and the measured shaft speed', () => {
  const fs = 12800, seconds = 20, n = fs * seconds, A = 10;
  const spec: ReductionSpec = { spectrum: {}, orders: { orders: [1, 2, 6], width: 0.5 } };
  /** A tone locked to order 6 of the shaft: its phase is 6 × the shaft angle. */
  const locked = (angle: (t: number) => number, order: number) => Float64Array.from({ length: n }, (_, i) => A * Math.sin(2 * Math.PI * order * angle(i / fs) + 0.7));

  it('a tone locked at 6 × a steady or slowly ramping shaft speed is order_6_rms = A/√2, and does not leak into orders 1 and 2', async () => {
    for (const s of [shaft(25, 0), shaft(25, 0.25 / seconds)]) { // 1500 rpm, and 1500 → 1515 rpm
      const { row } = await reduce([tachoSignal(n, fs, s.angle, 1), locked(s.angle, 6)], [TACHO, ACC], fs, spec);
      const acc = row('acc');
      expect((acc.order_6_rms as number) / (A / Math.SQRT2)).toBeCloseTo(1, 3);
      expect(acc.order_1_rms as number).toBeLessThan(1e-4 * A);
      expect(acc.order_2_rms as number).toBeLessThan(1e-4 * A);
      // The tacho's own row carries the speed, not orders; the accelerometer's carries orders, not speed.
      expect(row('tacho').order_6_rms).toBeNull();
      expect(acc.speed_mean_rpm).toBeNull();
    }
  });

  it('when the speed sweeps an order out of its band, that order is null with a note; slower orders stay defined', async () => {
    const s = shaft(25, 5 / seconds); // 1500 → 1800 rpm: order 6 sweeps 150 → 180 Hz, wider than ±0.5 order
    const { row, notes } = await reduce([tachoSignal(n, fs, s.angle, 1), locked(s.angle, 1)], [TACHO, ACC], fs, spec);
    expect(row('acc').order_6_rms).toBeNull();
    expect(row('acc').order_1_rms as number).toBeGreaterThan(0.9 * A / Math.SQRT2);
    expect(notes).toMatch(/acc: order 6 not defined: the shaft speed ranged 15\d\d\.\d–17\d\d\.\d rpm/);
  });

  it('a recording without a tacho channel has null order figures and says why', async () => {
    const { row, notes } = await reduce([locked((t) => 25 * t, 6)], [ACC], fs, spec);
    expect(row('acc').order_6_rms).toBeNull();
    expect(notes).toMatch(/no channel of this recording declares pulses_per_rev/);
  });
});

describe('the sample archive: speed on the tacho row, orders on the others, and the orders group recomputed alone', () => {
  it('a run that adds the orders section recomputes only that group, and equals a fresh run', async () => {
    const archive = sampleArchiveCopy();
    const dir = tempDir();
    const withoutOrders = join(dir, 'no-orders.yaml');
    writeFileSync(withoutOrders, 'statistics: {}\nspectrum: {}\nwindows: { length_s: 1.0 }\n');
    const withOrders = join(dir, 'orders.yaml');
    writeFileSync(withOrders, 'statistics: {}\nspectrum: {}\nwindows: { length_s: 1.0 }\norders: { orders: [1, 2, 6], width: 0.5 }\n');
    const out = join(dir, 'out'), fresh = join(dir, 'fresh');
    expect(quern('reduce', archive, '--out', out, '--spec', withoutOrders, '--log', 'plain').code).toBe(1); // the truncated file
    expect(quern('reduce', archive, '--out', out, '--spec', withOrders, '--log', 'plain').code).toBe(1);
    const run = readJson(join(out, 'run.json'));
    const night = run.recordings.find((r: { recording: string }) => r.recording === 'nightly/2026-11-16/pump-endurance.wav');
    expect(night.recomputed).toEqual(['orders']);
    expect(quern('reduce', archive, '--out', fresh, '--spec', withOrders, '--log', 'plain').code).toBe(1);
    const db = await (await DuckDBInstance.create()).connect();
    const read = async (sql: string) => (await db.runAndReadAll(sql)).getRowObjects();
    const orders = (d: string) => read(`select recording, channel, speed_mean_rpm, order_1_rms, order_2_rms, order_6_rms from '${d}/features.parquet' order by 1, 2`);
    expect(await orders(out)).toEqual(await orders(fresh));
    // The generator's shaft turns at 2970 rpm with a six-vane impeller (see sample-archive/README.md).
    const rows = await read(`select channel, speed_mean_rpm, speed_min_rpm, speed_max_rpm, order_6_rms from '${out}/features.parquet' where recording = 'nightly/2026-11-16/pump-endurance.wav' order by channel`);
    const by = Object.fromEntries(rows.map((r) => [r.channel, r]));
    for (const k of ['speed_mean_rpm', 'speed_min_rpm', 'speed_max_rpm']) expect(relative(by.tacho[k] as number, 2970)).toBeLessThan(5e-4);
    for (const c of ['acc_de', 'acc_nde', 'mic']) expect(by[c].order_6_rms).toBeGreaterThan(0);
    expect(by.tacho.order_6_rms).toBeNull();
    const speeds = await read(`select channel, count(speed_rpm) as with_speed, count(*) as windows from '${out}/windows.parquet' where recording = 'nightly/2026-11-16/pump-endurance.wav' group by channel order by channel`);
    for (const r of speeds) expect(Number(r.with_speed)).toBe(r.channel === 'tacho' ? Number(r.windows) : 0);
  }, 60_000);
});
