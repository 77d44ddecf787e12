// Rainflow cycles of a fatigue-relevant channel (strain, stress): turning points with a hysteresis gate, ASTM E1049-85 (2017)
// §5.4.4 counting, the Palmgren–Miner damage-equivalent range for a declared S–N slope, and the counted cycles into cycles.parquet.
import { CycleBins, type CycleBinning } from './cycle-bins.js';
import { DamageEquivalent } from './dsp/damage-equivalent.js';
import { Rainflow } from './dsp/rainflow.js';
import { TurningPoints } from './dsp/turning-points.js';
import type { StageDefinition } from './stage.js';

export interface RainflowOptions { slope: number; gate: number; bins: CycleBinning | null }

export const rainflow: StageDefinition<RainflowOptions> = {
  group: 'rainflow',
  columns: (o) => [
    { name: 'cycles_total', unit: '1', description: `Rainflow cycles counted (ASTM E1049-85 §5.4.4; the residue as half cycles), reversals not exceeding the gate of ${o.gate} [unit] left out.` },
    { name: 'range_max', unit: '[unit]', description: 'Largest counted range.' },
    { name: 'damage_equivalent_range', unit: '[unit]', description: `Constant range doing the same Palmgren–Miner damage in cycles_total cycles, for an S–N slope m = ${o.slope}: (Σ n·S^m / Σ n)^(1/m).` },
  ],
  create(ctx, o) {
    const bins = new CycleBins(o.bins ?? {});
    const damage = new DamageEquivalent(o.slope);
    const counter = new Rainflow((range, mean, count) => { damage.add(range, count); bins.add(range, mean, count); });
    const points = new TurningPoints(o.gate, (p) => counter.add(p));
    return {
      push(x) { points.push(x); },
      finish() {
        points.finish();
        counter.finish();
        for (const row of bins.sorted()) ctx.addRow('cycles', { ...row });
        return { cycles_total: damage.cycles, range_max: damage.cycles > 0 ? damage.maxRange : null, damage_equivalent_range: damage.range() };
      },
    };
  },
};
