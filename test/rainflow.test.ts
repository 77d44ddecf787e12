// Rainflow counting against ASTM E1049-85 (reapproved 2017) §5.4.4: its worked example, an independent coding of the
// standard's steps on random histories (vectors made by test/fixtures/make-rainflow-vectors.py), and textbook histories.
import { describe, expect, it } from 'vitest';
import { CycleBins } from '../stages/cycle-bins.js';
import { DamageEquivalent } from '../stages/dsp/damage-equivalent.js';
import { Rainflow } from '../stages/dsp/rainflow.js';
import { TurningPoints } from '../stages/dsp/turning-points.js';
import { inChunks } from './dsp-signals.js';
import { fixture, readJson } from './helpers.js';
import { channel, reduce } from './reduce-signal.js';

/** Counts a history fed in uneven chunks: rows [range, mean, count], equal pairs added up, sorted by range then mean. */
function count(history: ArrayLike<number>, gate = 0) {
  const bins = new CycleBins();
  const counter = new Rainflow((r, m, n) => bins.add(r, m, n));
  const points = new TurningPoints(gate, (p) => counter.add(p));
  inChunks(Float64Array.from(history), (c) => points.push(c));
  points.finish();
  counter.finish();
  return { rows: bins.sorted().map((r) => [r.range, r.mean, r.count]).sort((a, b) => a[0] - b[0] || a[1] - b[1]), maxDepth: counter.maxDepth };
}

const byRange = (rows: number[][]) => {
  const out: Record<number, number> = {};
  for (const [r, , n] of rows) out[r] = (out[r] ?? 0) + n;
  return out;
};

const strain = channel({ name: 'gauge', quantity: 'strain', unit: 'µm/m', scale: 2000 });
const cosine = (amplitude: number, cycles: number, perCycle: number, mean = 0) =>
  Float64Array.from({ length: cycles * perCycle + 1 }, (_, i) => mean + amplitude * Math.cos((2 * Math.PI * i) / perCycle));

describe('rainflow counting (ASTM E1049-85 (2017) §5.4.4)', () => {
  it("counts the standard's worked example history A…I = −2, 1, −3, 5, −1, 3, −4, 4, −2 to its table (history and counts from memory)", () => {
    const { rows } = count([-2, 1, -3, 5, -1, 3, -4, 4, -2]);
    // Range 3: ½ (A–B); 4: 1½ (B–C half, E–F whole); 6: ½ (H–I); 8: 1 (C–D, G–H halves); 9: ½ (D–G).
    expect(byRange(rows)).toEqual({ 3: 0.5, 4: 1.5, 6: 0.5, 8: 1, 9: 0.5 });
    expect(rows.find(([r, , n]) => r === 4 && n === 1)![1]).toBe(1); // E–F: −1 to 3, mean 1
  });

  const ref = readJson(fixture('rainflow-vectors.json'));
  const cases: [string, any][] = ref.cases.map((c: any) => [`history ${c.history} (${c.history < 2 ? 'whole numbers' : 'random walk'}), gate ${c.gate}`, c]);
  it.each(cases)('equals the standard coded independently in Python (%s)', (_, c: any) => {
    const { rows } = count(ref.histories[c.history], c.gate);
    expect(rows.length).toBe(c.cycles.length);
    rows.forEach((row, i) => row.forEach((v, j) => expect(v).toBeCloseTo(c.cycles[i][j], 12)));
  });

  it('a cosine of amplitude A over N whole cycles, peak to peak, is N cycles of range 2A (the residue as half cycles)', () => {
    const A = 70, N = 25;
    const { rows } = count(cosine(A, N, 40, 10));
    expect(byRange(rows)).toEqual({ [2 * A]: N });
    expect(rows.every(([, m]) => Math.abs(m - 10) < 1e-9)).toBe(true);
  });

  it('a gate drops reversals that do not exceed it: a 3-unit ripple on a cosine of amplitude 50 leaves the cosine\'s count', () => {
    const x = cosine(50, 10, 200).map((v, i) => v + 1.5 * Math.sin((2 * Math.PI * i) / 7));
    expect(count(x).rows.length).toBeGreaterThan(100);
    const { rows } = count(x, 4);
    const total = rows.reduce((s, [, , n]) => s + n, 0);
    expect(total).toBe(10);
    for (const [r] of rows) expect(Math.abs(r - 100)).toBeLessThanOrEqual(3.01);
  });

  it('streams with a stack bounded by the residue: 2 million samples of noise never hold more than a few dozen points', () => {
    let seed = 12345;
    const uniform = () => ((seed = (Math.imul(seed, 1664525) + 1013904223) >>> 0) / 2 ** 32);
    const counter = new Rainflow(() => {});
    const points = new TurningPoints(0, (p) => counter.add(p));
    const chunk = new Float64Array(65536);
    for (let k = 0; k < 31; k++) { for (let i = 0; i < chunk.length; i++) chunk[i] = uniform() - 0.5; points.push(chunk); }
    expect(counter.maxDepth).toBeLessThan(48);
  });
});

describe('damage-equivalent range (Palmgren–Miner)', () => {
  it('of a constant-amplitude history is its own range, whatever the slope', () => {
    for (const m of [3, 5, 10]) {
      const d = new DamageEquivalent(m);
      const counter = new Rainflow((r, _, n) => d.add(r, n));
      const points = new TurningPoints(0, (p) => counter.add(p));
      points.push(cosine(12.5, 30, 16));
      points.finish(); counter.finish();
      expect(d.cycles).toBe(30);
      expect(d.range()).toBeCloseTo(25, 12);
    }
  });

  it("of the standard's example history is (Σ n·S^m / Σ n)^(1/m) of its counts", () => {
    const d = new DamageEquivalent(5);
    const counter = new Rainflow((r, _, n) => d.add(r, n));
    [-2, 1, -3, 5, -1, 3, -4, 4, -2].forEach((p) => counter.add(p));
    counter.finish();
    const byHand = ((0.5 * 3 ** 5 + 1.5 * 4 ** 5 + 0.5 * 6 ** 5 + 1 * 8 ** 5 + 0.5 * 9 ** 5) / 4) ** (1 / 5);
    expect(d.range()).toBeCloseTo(byHand, 12);
    expect(d.cycles).toBe(4);
  });
});

describe('the rainflow stage through the pipeline', () => {
  it('gives cycles_total, range_max and damage_equivalent_range, and the cycles table, unbinned and binned', async () => {
    const x = cosine(300, 20, 50, 100);
    const { row, result } = await reduce(x, 500, { rainflow: {} }, strain);
    expect(row.cycles_total).toBe(20);
    expect(row.range_max).toBeCloseTo(600, 3);
    expect(row.damage_equivalent_range).toBeCloseTo(600, 3);
    const rows = result.tables.cycles;
    expect(rows.reduce((s, r) => s + (r.count as number), 0)).toBe(20);
    expect(rows[0]).toMatchObject({ recording: 'x.wav', channel: 'gauge', unit: 'µm/m' });
    const binned = await reduce(x, 500, { rainflow: { slope: 3, bins: { range_width: 50, mean_width: 40 } } }, strain);
    expect(binned.result.tables.cycles.map((r) => [r.range, r.mean, r.count])).toEqual([[625, 100, 20]]);
  });

  it('applies to strain and stress by default, to other channels only when the spec selects them', async () => {
    const x = cosine(1, 3, 50);
    expect((await reduce(x, 500, { rainflow: {} })).row.cycles_total).toBeNull();
    expect((await reduce(x, 500, { rainflow: { only: { names: ['x'] } } })).row.cycles_total).toBe(3);
    expect((await reduce(x, 500, { rainflow: {} }, channel({ quantity: 'stress', unit: 'MPa' }))).row.cycles_total).toBe(3);
  });
});
