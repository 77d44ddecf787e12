// A shaft coasting to rest, or starting from rest, at a uniform rate of change of speed: rate f(t) = f0 + a·t rev/s turns
// through f0·t + a·t²/2 revolutions (kinematics of uniform acceleration, closed form), so pulse m of `ppr` evenly spaced pulses
// comes when that angle reaches (m + phase)/ppr. Every true interval must be good, the last one too (the speed's slowest
// revolution is the true last one), and a pulse left out where the train runs steadily enough must still be found missing.
import { describe, expect, it } from 'vitest';
import { PulseTrain } from '../stages/dsp/pulse-train.js';

/** Pulse times of a linear ramp from rpm0 to rpm1 over `seconds` (one end at rest), the first mark at `phase` of a pulse. */
function pulsesOf(rpm0: number, rpm1: number, seconds: number, ppr: number, phase: number): number[] {
  const f0 = rpm0 / 60, a = (rpm1 - rpm0) / 60 / seconds, total = f0 * seconds + (a * seconds * seconds) / 2;
  // The positive root of f0·t + a·t²/2 = revs, cancellation-free (Press et al., Numerical Recipes, 3rd ed., 5.6).
  const when = (revs: number) => (2 * revs) / (f0 + Math.sqrt(Math.max(0, f0 * f0 + 2 * a * revs)));
  const out: number[] = [];
  for (let m = 0; (m + phase) / ppr < total; m++) out.push(when((m + phase) / ppr));
  return out;
}

function sortTrain(edges: number[], ppr: number, end: number) {
  const good: [number, number][] = [], missing: number[] = [], extra: number[] = [], irregular: number[] = [];
  const train = new PulseTrain(ppr, { interval: (a, b) => { good.push([a, b]); }, missing: (a, b) => { missing.push(a, b); }, extra: (t) => { extra.push(t); }, irregular: (a, b) => { irregular.push(a, b); } });
  for (const t of edges) train.edge(t);
  train.end(end);
  return { good, missing, extra, irregular };
}

/** The slowest revolution (rpm) of ppr consecutive good intervals, as the tacho stage reads it. */
function slowest(good: [number, number][], ppr: number): number {
  let most = 0;
  for (let i = 0; i + ppr <= good.length; i++) {
    if (good.slice(i, i + ppr).every(([a], j) => j === 0 || a === good[i + j - 1][1])) most = Math.max(most, good[i + ppr - 1][1] - good[i][0]);
  }
  return 60 / most;
}

// Coasting from 1800 rpm to rest in 4 s, and starting from rest to 1800 rpm in 4 s; the recording runs 2 s past the ramp.
const CASES: [string, number, number][] = [['coasting from 1800 rpm to rest', 1800, 0], ['starting from rest to 1800 rpm', 0, 1800]];
const PHASES = Array.from({ length: 49 }, (_, i) => 0.01 + i * 0.02);

describe('a shaft coasting to rest or starting from rest', () => {
  for (const [name, rpm0, rpm1] of CASES) {
    for (const ppr of [1, 2]) {
      it(`${name}, ${ppr} pulse(s) a revolution, 49 phases: every interval good, the slowest revolution the true end one`, () => {
        const wrong: string[] = [];
        for (const phase of PHASES) {
          const pulses = pulsesOf(rpm0, rpm1, 4, ppr, phase);
          const { good, missing, extra, irregular } = sortTrain(pulses, ppr, 6);
          const truth = pulses.slice(1).map((b, i): [number, number] => [pulses[i], b]);
          const ok = good.length === truth.length && good.every(([a, b], i) => a === truth[i][0] && b === truth[i][1]) && !missing.length && !extra.length && !irregular.length;
          if (!ok || Math.abs(slowest(good, ppr) / slowest(truth, ppr) - 1) > 1e-12) wrong.push(`${phase.toFixed(2)}: good ${good.length}/${truth.length} missing ${missing.length / 2} irregular ${irregular.length / 2}`);
        }
        expect(wrong).toEqual([]);
      });
    }
  }
});

describe('a pulse missing while the shaft coasts to rest (1 and 2 pulses a revolution, 49 phases)', () => {
  for (const ppr of [1, 2]) {
    it(`${ppr} pulse(s) a revolution: one left out mid-ramp, or just before the last, is found; one left out earlier in the last two revolutions is found, and the intervals after it are called missing too (the limit)`, () => {
      const wrong: string[] = [];
      for (const phase of PHASES) {
        const pulses = pulsesOf(1800, 0, 4, ppr, phase), n = pulses.length;
        for (const [k, missingIntervals] of [[Math.floor(n / 2), 1], [n - 2, 1], [n - 3, 2]] as const) {
          const { good, missing, extra, irregular } = sortTrain(pulses.filter((_, j) => j !== k), ppr, 6);
          // The interval holding the left-out pulse is found missing, with the good pulses either side of it.
          const found = missing.length / 2 === missingIntervals && missing[0] === pulses[k - 1] && missing[1] === pulses[k + 1];
          if (!found || good.length !== n - 1 - 1 - missingIntervals || extra.length || irregular.length) wrong.push(`${phase.toFixed(2)} left out ${k}/${n}: missing ${missing.length / 2} good ${good.length}`);
        }
      }
      expect(wrong).toEqual([]);
    });
  }
});

/** A 4.5 V trapezoid at pulse phase u: linear edges 0.01 of a pulse long, high for 0.05. */
const trapezoid = (u: number) => 4.5 * (u < 0.01 ? u / 0.01 : u < 0.05 ? 1 : u < 0.06 ? 1 - (u - 0.05) / 0.01 : 0);

describe('the tacho stage on a shaft at rest, run up, held and coasting to rest', () => {
  it('no pulse missing, every revolution counted, the slowest the true first and last ones (12.8 kHz, 1 pulse a revolution)', async () => {
    // At rest 1 s, up to 1500 rpm in 2 s, held 2 s, down to rest in 2 s, at rest 1 s: the angle in closed form, piece by piece.
    const fs = 12800, n = 8 * fs, top = 1500 / 60, acc = top / 2;
    const revs = (t: number) => t < 1 ? 0 : t < 3 ? (acc * (t - 1) ** 2) / 2 : t < 5 ? top + top * (t - 3) : t < 7 ? 3 * top + top * (t - 5) - (acc * (t - 5) ** 2) / 2 : 4 * top;
    const x = Float64Array.from({ length: n }, (_, i) => { const r = revs(i / fs) - 0.3; return r < 0 || r >= 4 * top - 0.3 - 0.06 ? 0 : trapezoid(r - Math.floor(r)); });
    const { reduceChannels, channel } = await import('./reduce-signal.js');
    const decl = channel({ name: 'tacho', quantity: 'voltage', unit: 'V', scale: 10, pulses_per_rev: 1, trigger_level: null, trigger_hysteresis: null });
    const { result, row } = await reduceChannels([x], [decl], fs, {});
    const r = row('tacho'), flag = result.quality[0].flags.find((f) => f.name === 'pulse_train')!;
    // 100 revolutions turned; the pulses start at 0.3 of the first and end at 0.3 of the last, 99 intervals between 100 pulses.
    expect(r.pulses_missing).toBe(0);
    expect(r.revolutions).toBe(99);
    expect(flag.message).not.toMatch(/missing at one place|[1-9]\d* missing/);
    // The slowest revolution, the first: from 0.3 to 1.3 revolutions of the ramp, each edge where its linear rise crosses the
    // trigger level, u of a pulse later; 60 / its duration, rpm.
    const u = ((flag.evidence.trigger_level as number) / 4.5) * 0.01;
    const first = Math.sqrt((2 * (1.3 + u)) / acc) - Math.sqrt((2 * (0.3 + u)) / acc);
    expect(Math.abs((r.speed_min_rpm as number) / (60 / first) - 1)).toBeLessThan(1e-3);
  });
});
