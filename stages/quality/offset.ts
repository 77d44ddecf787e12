// Offset: a mean far from zero, in units of the spread, for quantities that should have none, and drift of 1 s window means.
import type { StageDefinition } from '../stage.js';
import { momentsOf } from '../fused/moments.js';
import { finiteWindowsOf } from '../fused/finite-windows.js';
import { pct, type QualityThresholds, type Severity } from './flag.js';
import { metresPerSecond2, STANDARD_GRAVITY } from '../acceleration-units.js';

export const offset: StageDefinition<QualityThresholds> = {
  group: 'quality',
  columns: () => [
    { name: 'offset_ratio', unit: '1', description: '|mean| / std, for quantities that carry no DC.' },
    { name: 'drift_ratio', unit: '1', description: '(largest − smallest 1 s window mean) / std.' },
  ],
  create(ctx, q) {
    const applies = q.offset.quantities.includes(ctx.quantity);
    const win = Math.max(1, Math.round(ctx.sampleRate));
    const shared = momentsOf(ctx);
    let wmin = Infinity, wmax = -Infinity;
    // Means of windows of `win` finite samples, from the channel's fused pass.
    if (applies) finiteWindowsOf(ctx, win).listen((wsum, _, wn) => { const m = wsum / wn; if (m < wmin) wmin = m; if (m > wmax) wmax = m; });
    return {
      push() {},
      finish() {
        const threshold = `warn: |mean| > ${q.offset.warn_ratio}·std or window means drifting > ${q.offset.warn_drift_ratio}·std (quantities ${q.offset.quantities.join(', ')})`;
        const m = shared.moments();
        if (!applies || m.n === 0) {
          ctx.flag({ name: 'offset', severity: 'ok', value: null, threshold, evidence: {}, message: `not assessed for quantity "${ctx.quantity}"` });
          return { offset_ratio: null, drift_ratio: null };
        }
        const mean = m.mean, std = Math.sqrt(m.m2 / m.n);
        const ratio = std > 0 ? Math.abs(mean) / std : null;
        const drift = std > 0 && wmax >= wmin ? (wmax - wmin) / std : null;
        const issues: string[] = [];
        if (ratio != null && ratio > q.offset.warn_ratio) issues.push(`mean ${mean.toPrecision(3)} ${ctx.unit} is ${ratio.toFixed(2)} standard deviations from zero`);
        if (drift != null && drift > q.offset.warn_drift_ratio) issues.push(`1 s means drift over ${(wmax - wmin).toPrecision(3)} ${ctx.unit} (${drift.toFixed(2)} standard deviations)`);
        const severity: Severity = issues.length ? 'warn' : 'ok';
        const gravity = ratio != null && ratio > q.offset.warn_ratio ? gravityHint(ctx.quantity, ctx.unit, mean) : '';
        // What the offset and a ramp-like drift add to RMS over the signal's own spread (derived: variances add).
        const rmsExcess = Math.sqrt(1 + (ratio ?? 0) ** 2 + (drift ?? 0) ** 2 / 12) - 1;
        ctx.flag({
          name: 'offset', severity, value: ratio, threshold,
          evidence: { mean, std, window_mean_min: Number.isFinite(wmin) ? wmin : null, window_mean_max: Number.isFinite(wmax) ? wmax : null },
          message: issues.length ? `${issues.join('; ')}: a ${ctx.quantity} signal should carry none, and RMS and peak include it (RMS reads ${pct(rmsExcess)} high); check the sensor's bias, the coupling (AC/DC) and thermal drift${gravity}` : `mean ${mean.toPrecision(3)} ${ctx.unit}, no drift beyond the threshold`,
        });
        return { offset_ratio: ratio, drift_ratio: drift };
      },
    };
  },
};

/** A mean within 5 % of 1 g on an accelerometer is gravity on a DC-coupled sensor: the message says how to take it out. */
export function gravityHint(quantity: string, unit: string, mean: number): string {
  const perUnit = metresPerSecond2(unit);
  const g = perUnit ? STANDARD_GRAVITY / perUnit : null;
  if (quantity !== 'acceleration' || g == null || Math.abs(Math.abs(mean) / g - 1) > 0.05) return '';
  return `. The mean is about 1 g: a DC-coupled accelerometer carrying gravity; add ${-Math.sign(mean) * g} to the channel's offset in archive.yaml to take it out, or read std, which excludes it`;
}
