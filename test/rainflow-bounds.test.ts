// Rainflow's memory held whatever the recording's length: the rows of cycles.parquet under their cap (binned, then widened by
// doubling), checked against a direct binned count of the cycles that the standard's steps coded independently in Python give
// (test/fixtures/make-rainflow-vectors.py, ASTM E1049-85 (2017) §5.4.4); and the residue under its cap on a ring-down.
import { describe, expect, it } from 'vitest';
import { CycleBins, startingWidth, type CycleBinning } from '../stages/cycle-bins.js';
import { DamageEquivalent } from '../stages/dsp/damage-equivalent.js';
import { Rainflow } from '../stages/dsp/rainflow.js';
import { TurningPoints } from '../stages/dsp/turning-points.js';
import { rainflow, type RainflowOptions } from '../stages/rainflow.js';
import type { ChannelContext, Stage } from '../stages/stage.js';
import { inChunks, uniform } from './dsp-signals.js';
import { fixture, readJson } from './helpers.js';

const ref = readJson(fixture('rainflow-vectors.json'));
type Row = [number, number, number];

/** A history counted into bins with a cap; the rows are checked against the cap after every cycle. */
function binnedCount(history: ArrayLike<number>, gate: number, declared: CycleBinning, cap: number) {
  const bins = new CycleBins(declared, cap);
  let most = 0, largestAtFold = 0;
  const counter = new Rainflow((r, m, n) => {
    if (!bins.coarsened) largestAtFold = Math.max(largestAtFold, r);
    bins.add(r, m, n);
    most = Math.max(most, bins.size);
  });
  const points = new TurningPoints(gate, (p) => counter.add(p));
  inChunks(Float64Array.from(history), (c) => points.push(c));
  points.finish();
  counter.finish();
  return { bins, most, largestAtFold, rows: bins.sorted().map((r): Row => [r.range, r.mean, r.count]) };
}

/** The reference's exact cycles counted straight into bins of the given widths (edges at whole multiples, rows at centres). */
function directCount(cycles: Row[], rangeWidth: number, meanWidth: number): Row[] {
  const cells = new Map<string, Row>();
  for (const [r, m, n] of cycles) {
    const c: Row = [(Math.floor(r / rangeWidth) + 0.5) * rangeWidth, (Math.floor(m / meanWidth) + 0.5) * meanWidth, 0];
    const key = `${c[0]}|${c[1]}`;
    (cells.get(key) ?? cells.set(key, c).get(key)!)[2] += n;
  }
  return [...cells.values()].sort((a, b) => b[0] - a[0] || a[1] - b[1]);
}

const total = (rows: Row[]) => rows.reduce((s, [, , n]) => s + n, 0);

/** Feeds a signal through the rainflow stage in chunks, as the pipeline would; gathers its rows and notes. */
function stage(x: Float64Array | ((push: (c: Float64Array) => void) => void), options: Partial<RainflowOptions> = {}) {
  const rows: Record<string, number | null>[] = [], notes: string[] = [];
  const ctx: ChannelContext = {
    name: 'gauge', quantity: 'strain', unit: 'µm/m', sampleRate: 1000, range: null, bits: null, maxFrequencyHz: null, stepSize: null, fullScale: null,
    declared: true, declaredDurationS: null, timeSteps: () => null, note: (m) => notes.push(m), addRow: (_, r) => rows.push(r), flag: () => {}, evidence: () => {},
    shared: <T extends Stage>(_: string, make: () => T) => make(),
  };
  const s = rainflow.create(ctx, { slope: 5, gate: 0, bins: null, ...options });
  if (typeof x === 'function') x((c) => s.push(c));
  else inChunks(x, (c) => s.push(c));
  return { figures: s.finish() as Record<string, number>, rows, notes };
}

describe('rows of cycles.parquet under their cap', () => {
  it('the starting width is the largest range / 256 rounded up to 1, 2 or 5 × 10^k (our rule; worked by hand)', () => {
    expect(startingWidth(600)).toBe(5); // 2.34 → 5
    expect(startingWidth(100)).toBe(0.5); // 0.39 → 0.5
    expect(startingWidth(256)).toBe(1);
    expect(startingWidth(300)).toBe(2); // 1.17 → 2
    expect(startingWidth(0)).toBe(1);
  });

  it('bins of width 2w are pairs of bins of width w: ⌊⌊v/w⌋/2⌋ = ⌊v/2w⌋, and a w-bin\'s centre falls in the 2w-bin of its values (arithmetic)', () => {
    const u = uniform(7);
    const wrong: number[][] = [];
    for (const w of [0.1, 0.5, 1, 5, 50, 0.1 * 2 ** 5, 40 * 2 ** 3, 1e-6]) {
      for (let i = 0; i < 20_000; i++) {
        // Values spread over ±1000 bins, a fifth of them on a bin edge exactly.
        const v = i % 5 === 0 ? Math.round((u() - 0.5) * 2000) * w : (u() - 0.5) * 2000 * w;
        const k = Math.floor(v / w);
        if (Math.floor(k / 2) !== Math.floor(v / (2 * w)) || Math.floor(((k + 0.5) * w) / (2 * w)) !== Math.floor(k / 2)) wrong.push([w, v]);
      }
    }
    expect(wrong).toEqual([]);
  });

  const cases: [string, any][] = ref.cases.map((c: any) => [`history ${c.history}, gate ${c.gate}`, c]);
  it.each(cases)('unbinned, folded past a cap of 16 rows: the direct binned count at the final widths of the Python reference\'s cycles (%s)', (_, c: any) => {
    const { bins, most, largestAtFold, rows } = binnedCount(ref.histories[c.history], c.gate, {}, 16);
    const cycles = c.cycles as Row[];
    expect(most).toBeLessThanOrEqual(16);
    expect(bins.coarsened).toBe(true);
    const { range: rw, mean: mw } = bins.widths();
    // The widths are the starting width, from the largest range when the cap was passed, doubled.
    expect(rw).toBe(startingWidth(largestAtFold) * 2 ** bins.doublings);
    expect(mw).toBe(rw);
    expect(bins.doublings).toBeGreaterThan(0);
    expect(total(rows)).toBe(total(cycles));
    expect(rows).toEqual(directCount(cycles, rw!, mw!));
  });

  it.each(cases)('unbinned under a cap of 64 rows, and declared bins of 0.25 × 0.5 widened past one: the same direct count (%s)', (_, c: any) => {
    const cycles = c.cycles as Row[];
    const loose = binnedCount(ref.histories[c.history], c.gate, {}, 64);
    expect(loose.most).toBeLessThanOrEqual(64);
    expect(loose.rows).toEqual(directCount(cycles, loose.bins.widths().range!, loose.bins.widths().mean!));
    const declared = binnedCount(ref.histories[c.history], c.gate, { range_width: 0.25, mean_width: 0.5 }, 16);
    expect(declared.most).toBeLessThanOrEqual(16);
    expect(declared.bins.doublings).toBeGreaterThan(0);
    expect(declared.bins.widths()).toEqual({ range: 0.25 * 2 ** declared.bins.doublings, mean: 0.5 * 2 ** declared.bins.doublings });
    expect(declared.rows).toEqual(directCount(cycles, 0.25 * 2 ** declared.bins.doublings, 0.5 * 2 ** declared.bins.doublings));
  });

  it('a declared range width alone: means are binned at the same width once the cap is passed', () => {
    const c = ref.cases[2];
    const { bins, rows } = binnedCount(ref.histories[c.history], c.gate, { range_width: 3 }, 32);
    const { range: rw, mean: mw } = bins.widths();
    expect(rw).toBe(3 * 2 ** bins.doublings);
    expect(mw).toBe(rw);
    expect(rows).toEqual(directCount(c.cycles, rw!, mw!));
  });

  it('declared bins under the cap are as declared, with no note', () => {
    const c = ref.cases[0];
    const { bins, rows } = binnedCount(ref.histories[c.history], c.gate, { range_width: 10, mean_width: 10 }, 65_536);
    expect(bins.coarsened).toBe(false);
    expect(bins.widths()).toEqual({ range: 10, mean: 10 });
    expect(rows).toEqual(directCount(c.cycles, 10, 10));
  });

  it('refuses a cap too small for the doubling to end', () => {
    expect(() => new CycleBins({}, 8)).toThrow(/at least 16/);
  });
});

describe('the rainflow stage over a long recording', () => {
  it('3 million samples of float noise in 65,536-sample chunks: at most 65,536 rows, a note naming the widths, the figures as with a tiny cap', () => {
    // Gate 0 and no ties: the turning points are the first sample, every strict local extreme and the last sample.
    let extremes = 0, lo = Infinity, hi = -Infinity;
    const noise = (push: (c: Float64Array) => void) => {
      const u = uniform(2024), chunk = new Float64Array(65_536);
      let a = NaN, b = NaN;
      extremes = 0;
      for (let k = 0; k < 46; k++) {
        for (let i = 0; i < chunk.length; i++) {
          const v = (chunk[i] = 100 * (u() - 0.5) + 20 * Math.sin(i / 50));
          if ((b - a) * (v - b) < 0) extremes++;
          a = b; b = v; lo = Math.min(lo, v); hi = Math.max(hi, v);
        }
        push(chunk);
      }
    };
    const { figures, rows, notes } = stage(noise);
    expect(rows.length).toBeLessThanOrEqual(65_536);
    expect(rows.length).toBeGreaterThan(1000);
    expect(rows.reduce((s, r) => s + (r.count as number), 0)).toBe(figures.cycles_total);
    // Each turning point after the first adds half a cycle, and the largest range is the history's highest less its lowest
    // (properties of rainflow counting; from memory).
    expect(figures.cycles_total).toBe((extremes + 2 - 1) / 2);
    expect(figures.range_max).toBe(hi - lo);
    expect(notes).toHaveLength(1);
    expect(notes[0]).toMatch(/^gauge: one row per distinct range and mean would give more than 65536 rows of cycles\.parquet; its rows are binned at range width [\d.]+ µm\/m, mean width [\d.]+ µm\/m/);
    // Folded at 16 rows rather than 65,536: the figures come from the cycles themselves, so they are the same to the last bit.
    const tiny = stage(noise, { rowCap: 16 });
    expect(tiny.rows.length).toBeLessThanOrEqual(16);
    expect(tiny.figures).toEqual(figures);
  });

  it('a recording whose rows stay under the cap: unbinned rows, no note', () => {
    const c = ref.cases[4];
    const { rows, notes } = stage(Float64Array.from(ref.histories[c.history]));
    expect(notes).toEqual([]);
    expect(rows.map((r) => [r.range, r.mean, r.count]).sort((a, b) => a[0]! - b[0]! || a[1]! - b[1]!)).toEqual(c.cycles);
  });
});

describe('the rainflow residue under its cap', () => {
  const ring = ref.ring_down;
  const exact = (m: number) => { const d = new DamageEquivalent(m); for (const [r, , n] of ring.cycles) d.add(r, n); return d; };

  it('a diverging history never builds a residue: each larger reversal counts the one before as a half cycle at once', () => {
    const counter = new Rainflow(() => {});
    for (let i = 0; i < 100_000; i++) counter.add((i % 2 ? -1 : 1) * (1 + i * 1e-3));
    expect(counter.maxDepth).toBeLessThanOrEqual(3);
  });

  it('a converging one does, a point a reversal: two ring-downs of 600 reversals against the Python reference, residue capped at 8', () => {
    const d = new DamageEquivalent(5);
    const counter = new Rainflow((r, _, n) => d.add(r, n), 8);
    const points = new TurningPoints(0, (p) => counter.add(p));
    inChunks(Float64Array.from(ring.history), (c) => points.push(c));
    points.finish();
    counter.finish();
    expect(counter.maxDepth).toBeLessThanOrEqual(8);
    expect(counter.closedEarly).toBeGreaterThan(0);
    const e = exact(5);
    expect(d.cycles).toBe(e.cycles);
    expect(d.maxRange).toBe(e.maxRange);
    // Closing pairs of nearly equal ranges (0.2 % apart) as whole cycles moves the damage-equivalent range by 0.13 % here.
    expect(Math.abs(d.range()! / e.range()! - 1)).toBeLessThan(0.002);
  });

  it('with room for the whole residue: the Python reference exactly', () => {
    const d = new DamageEquivalent(3);
    const counter = new Rainflow((r, _, n) => d.add(r, n), 1024);
    const points = new TurningPoints(0, (p) => counter.add(p));
    points.push(Float64Array.from(ring.history));
    points.finish();
    counter.finish();
    expect(counter.maxDepth).toBeGreaterThan(600);
    expect(counter.closedEarly).toBe(0);
    expect(d.cycles).toBe(exact(3).cycles);
    expect(d.range()).toBeCloseTo(exact(3).range()!, 10);
  });

  it('the stage notes it, with cycles_total and range_max as the reference gives them', () => {
    const { figures, notes } = stage(Float64Array.from(ring.history), { residueCap: 16 });
    expect(figures.cycles_total).toBe(exact(5).cycles);
    expect(figures.range_max).toBe(exact(5).maxRange);
    expect(notes.some((n) => /^gauge: the rainflow residue reached 16 turning points/.test(n))).toBe(true);
  });

  // Hand-worked from ASTM E1049-85 (2017) §5.4.4's steps (from memory): read a point; X the latest range, Y the one before; while
  // X ≥ Y, Y is a whole cycle (a half cycle where it holds the start S); at the end every range left is a half cycle.
  /** Cycles as "range@mean×count" in a sorted list, counted with the residue capped at `cap` points. */
  const counted = (points: number[], cap: number) => {
    const out: string[] = [];
    const counter = new Rainflow((r, m, n) => out.push(`${r}@${m}×${n}`), cap);
    for (const p of points) counter.add(p);
    counter.finish();
    return { cycles: out.sort(), closedEarly: counter.closedEarly };
  };
  const tenPoints = [10, -9, 8, -7, 6, -5, 4, -3, 2, -1];

  it('a ring-down of 10 points that ends so: ASTM counts nine half cycles (19, 17 … 3); the cap of 8 counts 13 and 9 as whole cycles and 11 as a half in their place, the same cycles_total and range_max', () => {
    // ASTM: every range is smaller than the one before, so nothing closes; the residue is the whole history.
    expect(counted(tenPoints, 1024).cycles).toEqual(['11@0.5×0.5', '13@-0.5×0.5', '15@0.5×0.5', '17@-0.5×0.5', '19@0.5×0.5', '3@0.5×0.5', '5@-0.5×0.5', '7@0.5×0.5', '9@-0.5×0.5']);
    // Capped: at 8 points (10 … −3) the pairs (−7, 6) and (−5, 4) of the upper half close as whole cycles, leaving 10, −9, 8, −3,
    // then 2, −1 come; the residue's half cycles are 19, 17, 11 (8 to −3), 5, 3.
    const capped = counted(tenPoints, 8);
    expect(capped.closedEarly).toBe(2);
    expect(capped.cycles).toEqual(['11@2.5×0.5', '13@-0.5×1', '17@-0.5×0.5', '19@0.5×0.5', '3@0.5×0.5', '5@-0.5×0.5', '9@-0.5×1']);
    // Each point still ends half a cycle (ASTM: 9 ranges × ½ = 4.5), and the largest range is the same.
    const total = (c: string[]) => c.reduce((t, x) => t + Number(x.split('×')[1]), 0);
    expect(total(capped.cycles)).toBe(4.5);
  });

  it('a larger reversal after the ring-down: ASTM closes the residue\'s pairs from the newest point down; the cap\'s pairs are the same only when an odd number of points came between the cap and that reversal', () => {
    // Three points after the cap (2, −1, 0.5), then −20. ASTM: X = 20.5 closes (−1, 0.5), then (−3, 2), (−5, 4), (−7, 6), (−9, 8)
    // as whole cycles; 10 to −20 is left, a half cycle of 30.
    const odd = [...tenPoints, 0.5, -20];
    const astm = ['1.5@-0.25×1', '13@-0.5×1', '17@-0.5×1', '30@-5×0.5', '5@-0.5×1', '9@-0.5×1'];
    expect(counted(odd, 1024).cycles).toEqual(astm);
    expect(counted(odd, 8).cycles).toEqual(astm);
    // Two points after the cap (2, −1), then 20. ASTM closes (2, −1), (4, −3), (6, −5), (8, −7) whole, 10 to −9 as the start's
    // half cycle and 20 from −9 as a half; the cap has closed (−7, 6) and (−5, 4) instead, pairing each point with its other neighbour.
    const even = [...tenPoints, 20];
    expect(counted(even, 1024).cycles).toEqual(['11@0.5×1', '15@0.5×1', '19@0.5×0.5', '29@5.5×0.5', '3@0.5×1', '7@0.5×1']);
    expect(counted(even, 8).cycles).toEqual(['11@2.5×1', '13@-0.5×1', '19@0.5×0.5', '29@5.5×0.5', '3@0.5×1', '9@-0.5×1']);
  });

  it('300,000 reversals of a slow ring-down stay under the default cap of 65,536 points', () => {
    const counter = new Rainflow(() => {});
    const n = 300_000;
    let cycles = 0;
    const c = new Rainflow((_, __, k) => { cycles += k; });
    for (let i = 0; i < n; i++) { const p = (i % 2 ? -1 : 1) * 1000 * (1 - 1e-5) ** i; counter.add(p); c.add(p); }
    c.finish();
    expect(counter.maxDepth).toBeLessThanOrEqual(65_536);
    expect(counter.closedEarly).toBeGreaterThan(0);
    expect(cycles).toBe((n - 1) / 2);
  });
});
