// Rainflow cycles of a fatigue-relevant channel (strain, stress): turning points with a hysteresis gate, ASTM E1049-85 (2017)
// §5.4.4 counting, the Palmgren–Miner damage-equivalent range for a declared S–N slope, and the counted cycles into cycles.parquet.
import { CycleBins, type CycleBinning } from './cycle-bins.js';
import { DamageEquivalent } from './dsp/damage-equivalent.js';
import { Rainflow } from './dsp/rainflow.js';
import { TurningPoints } from './dsp/turning-points.js';
import { missingOf } from './fused/missing.js';
import { noFiniteSamples } from './quality/flag.js';
import type { StageDefinition } from './stage.js';

export interface RainflowOptions {
  slope: number;
  gate: number;
  bins: CycleBinning | null;
  /** Most rows of cycles.parquet per channel, and most points the residue holds; tests lower them. */
  rowCap?: number;
  residueCap?: number;
}

const width = (w: number | undefined) => (w === undefined ? 'unbinned' : `${+w.toPrecision(12)}`);

/** Why the rows are coarser than asked, with the widths used; null when they are as declared. */
export function rowsNote(name: string, unit: string, bins: CycleBins, declared: CycleBinning | null): string | null {
  if (!bins.coarsened) return null;
  const w = bins.widths();
  const used = `range width ${width(w.range)} ${unit}, mean width ${width(w.mean)} ${unit}`;
  const asked = declared && (declared.range_width !== undefined || declared.mean_width !== undefined)
    ? `the declared bins (range width ${width(declared.range_width)}, mean width ${width(declared.mean_width)})` : 'one row per distinct range and mean';
  return `${name}: ${asked} would give more than ${bins.cap} rows of cycles.parquet; its rows are binned at ${used} (rows at bin centres); cycles_total, range_max and damage_equivalent_range are from the cycles themselves, unbinned`;
}

/** The residue held its cap: how many cycles were closed before a larger reversal came. */
export function residueNote(name: string, counter: Rainflow): string {
  return `${name}: the rainflow residue reached ${counter.residueCap} turning points (a long run of ever smaller reversals, as in a ring-down) ${counter.closings} time(s); ${counter.closedEarly} cycles of its smaller half were counted as whole cycles then, as a later larger reversal counts such pairs (ASTM E1049 pairs them from the newest point, so half the time with their other neighbours); had the recording ended first, ASTM E1049 would count those ranges as half cycles; cycles_total and range_max are unchanged, damage_equivalent_range and those rows of cycles.parquet are approximate`;
}

export const rainflow: StageDefinition<RainflowOptions> = {
  group: 'rainflow',
  section: 'rainflow',
  spectral: false,
  columns: (o) => [
    { name: 'cycles_total', unit: '1', description: `Rainflow cycles counted (ASTM E1049-85 §5.4.4; the residue as half cycles), reversals not exceeding the gate of ${o.gate} [unit] left out; null when the channel has no finite samples.` },
    { name: 'range_max', unit: '[unit]', description: 'Largest counted range.' },
    { name: 'damage_equivalent_range', unit: '[unit]', description: `Constant range doing the same Palmgren–Miner damage in cycles_total cycles, for an S–N slope m = ${o.slope}: (Σ n·S^m / Σ n)^(1/m).` },
  ],
  create(ctx, o) {
    // The figures come from every cycle as counted; only the rows of cycles.parquet are binned.
    const bins = new CycleBins(o.bins ?? {}, o.rowCap);
    const damage = new DamageEquivalent(o.slope);
    const counter = new Rainflow((range, mean, count) => { damage.add(range, count); bins.add(range, mean, count); }, o.residueCap);
    const points = new TurningPoints(o.gate, (p) => counter.add(p));
    // The dropout flag's count, read at the end: a channel with no finite sample has no cycles to count, not 0 of them.
    const missing = missingOf(ctx);
    let n = 0;
    return {
      push(x) { points.push(x); n += x.length; },
      finish() {
        points.finish();
        counter.finish();
        for (const row of bins.sorted()) ctx.addRow('cycles', { ...row });
        const rows = rowsNote(ctx.name, ctx.unit, bins, o.bins);
        if (rows) ctx.note(rows);
        if (counter.closedEarly) ctx.note(residueNote(ctx.name, counter));
        return { cycles_total: noFiniteSamples(n, n - missing.count) ? null : damage.cycles, range_max: damage.cycles > 0 ? damage.maxRange : null, damage_equivalent_range: damage.range() };
      },
    };
  },
};
