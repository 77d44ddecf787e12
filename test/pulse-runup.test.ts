// The pulse train during run-ups and run-downs, with edge times in closed form: a shaft rate f(t) = f0 + a·t rev/s turns through
// f0·t + a·t²/2 revolutions, so pulse m of `ppr` evenly spaced pulses rises when that angle reaches (m + 0.1)/ppr (the positive
// root of the quadratic). Strays are put at random phases, as in test/pulse-strays.test.ts. The speed of the true pulses is
// 60 × intervals / (ppr × their span) (common practice), which the good intervals must give within 0.05 % (the tacho tests'
// tolerance), with every true interval good.
import { describe, expect, it } from 'vitest';
import { PulseTrain } from '../stages/dsp/pulse-train.js';
import { uniform } from './dsp-signals.js';
import { channel, reduce } from './reduce-signal.js';

/** A linear speed ramp from rpm0 to rpm1 over `seconds`. */
function ramp(rpm0: number, rpm1: number, seconds: number) {
  const f0 = rpm0 / 60, a = (rpm1 - rpm0) / 60 / seconds;
  const when = (revs: number) => (a === 0 ? revs / f0 : (2 * revs) / (f0 + Math.sqrt(f0 * f0 + 2 * a * revs)));
  return { seconds, when, angle: (t: number) => f0 * t + (a * t * t) / 2 };
}

type Ramp = ReturnType<typeof ramp>;

/** True edge times over the ramp, and one stray a revolution in its first pulse period at a phase uniform in [0.1, 0.9] of it. */
function runUpWithStrays(s: Ramp, ppr: number, seed: number | null) {
  const u = seed == null ? null : uniform(seed);
  const pulses: number[] = [], strays: number[] = [];
  for (let m = 0; ; m++) {
    const t = s.when((m + 0.1) / ppr);
    if (t >= s.seconds) break;
    pulses.push(t);
    if (u && m % ppr === 0) {
      const st = s.when((m + 0.1 + 0.1 + 0.8 * u()) / ppr);
      if (st < s.seconds) strays.push(st);
    }
  }
  return { pulses, strays, edges: [...pulses, ...strays].sort((a, b) => a - b) };
}

function sortTrain(edges: number[], ppr: number, end: number) {
  const good: [number, number][] = [], extra: number[] = [], missing: number[] = [], irregular: number[] = [];
  const train = new PulseTrain(ppr, {
    interval: (a, b) => { good.push([a, b]); }, missing: (a) => { missing.push(a); }, extra: (t) => { extra.push(t); }, irregular: (a) => { irregular.push(a); },
  });
  for (const t of edges) train.edge(t);
  train.end(end);
  return { good, extra, missing, irregular };
}

/** Mean, slowest and fastest revolution (rpm) of good intervals, as the tacho stage reads them. */
function speeds(good: [number, number][], ppr: number) {
  const span = good.reduce((s, [a, b]) => s + b - a, 0);
  const revs: number[] = [];
  for (let i = 0; i + ppr <= good.length; i++) {
    // A revolution: ppr consecutive good intervals.
    if (good.slice(i, i + ppr).every(([a], j) => j === 0 || a === good[i + j - 1][1])) revs.push(60 / (good[i + ppr - 1][1] - good[i][0]));
  }
  return { mean: (60 * good.length) / (ppr * span), min: Math.min(...revs), max: Math.max(...revs) };
}

const RAMPS: [string, Ramp][] = [['run-up 300 → 3000 rpm in 10 s', ramp(300, 3000, 10)], ['run-down 3000 → 300 rpm in 10 s', ramp(3000, 300, 10)]];

describe('stray pulses during run-ups and run-downs', () => {
  for (const [name, s] of RAMPS) {
    it(`${name}, 1 and 2 pulses a revolution, a stray each revolution at a random phase (200 seeds): every true interval good`, () => {
      for (const ppr of [1, 2]) {
        const wrong: string[] = [];
        for (let seed = 1; seed <= 200; seed++) {
          const { pulses, strays, edges } = runUpWithStrays(s, ppr, seed);
          const { good, extra, missing, irregular } = sortTrain(edges, ppr, s.seconds);
          const truth = speeds(pulses.slice(1).map((b, i) => [pulses[i], b]), ppr);
          const got = speeds(good, ppr);
          const allGood = good.length === pulses.length - 1 && good.every(([a, b], i) => a === pulses[i] && b === pulses[i + 1]);
          const fine = allGood && missing.length === 0 && extra.length + irregular.length === strays.length && irregular.length <= 1
            && rel(got.mean, truth.mean) < 5e-4 && rel(got.min, truth.min) < 5e-4 && rel(got.max, truth.max) < 5e-4;
          if (!fine) wrong.push(`${seed}: ${allGood} mean ${rel(got.mean, truth.mean).toExponential(1)} min ${rel(got.min, truth.min).toExponential(1)} max ${rel(got.max, truth.max).toExponential(1)} good ${good.length}/${pulses.length - 1} extra ${extra.length} missing ${missing.length} irregular ${irregular.length} strays ${strays.length}`);
        }
        expect(wrong, `pulses_per_rev ${ppr}`).toEqual([]);
      }
    });
  }
});

const rel = (x: number | null, y: number) => Math.abs((x as number) / y - 1);

describe('one fault in the middle of a fast run-up (300 → 6000 rpm in 4 s, 1 and 2 pulses a revolution)', () => {
  const s = ramp(300, 6000, 4);
  it('a lone stray (a noise spike) at every tenth of a pulse period in the middle: extra, every true interval good', () => {
    for (const ppr of [1, 2]) {
      const { pulses } = runUpWithStrays(s, ppr, null);
      const k = Math.floor(pulses.length / 2);
      for (let u = 0.1; u < 0.95; u += 0.1) {
        const stray = s.when((k + 0.1 + u) / ppr);
        const { good, extra, missing, irregular } = sortTrain([...pulses, stray].sort((a, b) => a - b), ppr, s.seconds);
        expect(extra, `ppr ${ppr}, stray at ${u.toFixed(1)}`).toEqual([stray]);
        expect([missing.length, irregular.length]).toEqual([0, 0]);
        expect(good.every(([a, b], i) => a === pulses[i] && b === pulses[i + 1]) && good.length === pulses.length - 1).toBe(true);
      }
    }
  });

  it('a lone missing pulse in the middle: one missing pulse at its time, every other true interval good, the speed of the rest', () => {
    for (const ppr of [1, 2]) {
      const { pulses } = runUpWithStrays(s, ppr, null);
      const k = Math.floor(pulses.length / 2);
      const { good, extra, missing, irregular } = sortTrain(pulses.filter((_, i) => i !== k), ppr, s.seconds);
      expect([missing, extra.length, irregular.length]).toEqual([[pulses[k - 1]], 0, 0]);
      const truth = pulses.slice(1).map((b, i): [number, number] => [pulses[i], b]).filter(([a, b]) => a !== pulses[k] && b !== pulses[k]);
      expect(good).toEqual(truth);
      expect(rel(speeds(good, ppr).mean, speeds(truth, ppr).mean)).toBeLessThan(5e-4);
    }
  });
});

describe('through the tacho stage: a run-up with a stray pulse each revolution', () => {
  // A 5 V trapezoid at pulse phase u: linear edges `ramp` long, high for `duty`; it rises through 2.5 V at u = ramp/2.
  const trapezoid = (u: number, duty: number, ramp: number) => 5 * (u < 0 ? 0 : u < ramp ? u / ramp : u < duty ? 1 : u < duty + ramp ? 1 - (u - duty) / ramp : 0);
  it('300 → 3000 rpm in 10 s, 1 and 2 pulses a revolution: mean, slowest, fastest revolution and each window within 0.05 % of the closed form', async () => {
    const fs = 25600, seconds = 10, n = fs * seconds, s = ramp(300, 3000, seconds), EDGE = 0.02;
    for (const ppr of [1, 2]) {
      const u = uniform(7 + ppr);
      // Pulse m rises through 2.5 V at angle (m + 0.01) / ppr; a stray, 0.03 of a pulse period wide, in the first pulse period of each
      // revolution at a phase uniform in [0.2, 0.85].
      const strayAt: number[] = [];
      for (let r = 0; r < 3000; r++) strayAt.push(r * ppr + 0.2 + 0.65 * u());
      const x = Float64Array.from({ length: n }, (_, i) => {
        const p = ppr * s.angle(i / fs), m = Math.floor(p), stray = strayAt[Math.floor(m / ppr)];
        return trapezoid(p - m, 0.1, EDGE) + trapezoid(p - stray, 0.03, EDGE);
      });
      const t: number[] = [];
      for (let m = 0; s.when((m + EDGE / 2) / ppr) < seconds - 0.001; m++) t.push(s.when((m + EDGE / 2) / ppr));
      const { row, result } = await reduce(x, fs, { windows: { length_s: 1 } }, channel({ name: 'tacho', quantity: 'voltage', unit: 'V', scale: 10, pulses_per_rev: ppr, trigger_level: 2.5, trigger_hysteresis: 1 }));
      const tt = t;
      expect(row.revolutions).toBe((tt.length - 1) / ppr);
      expect(row.pulses_missing).toBe(0);
      expect(rel(row.speed_mean_rpm, (60 * (tt.length - 1)) / (ppr * (tt.at(-1)! - tt[0])))).toBeLessThan(5e-4);
      expect(rel(row.speed_min_rpm, 60 / (tt[ppr] - tt[0]))).toBeLessThan(5e-4);
      expect(rel(row.speed_max_rpm, 60 / (tt.at(-1)! - tt.at(-1 - ppr)!))).toBeLessThan(5e-4);
      for (const w of result.tables.windows) {
        const a = Math.max(w.window_start_s as number, tt[0]), b = Math.min((w.window_start_s as number) + 1, tt.at(-1)!);
        expect(rel(w.speed_rpm as number, (60 * (s.angle(b) - s.angle(a))) / (b - a))).toBeLessThan(5e-4);
      }
    }
  });
});
