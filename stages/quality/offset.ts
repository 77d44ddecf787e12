// Offset: a mean far from zero, in units of the spread, for quantities that should have none, and a trend of the 1 s window means.
import type { StageDefinition } from '../stage.js';
import { momentsOf } from '../fused/moments.js';
import { finiteWindowsOf } from '../fused/finite-windows.js';
import { pct, type QualityThresholds, type Severity } from './flag.js';
import { metresPerSecond2, STANDARD_GRAVITY } from '../acceleration-units.js';
import { addPoint, emptyLineSums, fittedLine } from '../dsp/line-fit.js';

export const offset: StageDefinition<QualityThresholds> = {
  group: 'quality',
  columns: () => [
    { name: 'offset_ratio', unit: '1', description: '|mean| / std, for quantities that carry no DC.' },
    { name: 'drift_ratio', unit: '1', description: 'Rise across the recording of the least-squares line through the 1 s window means, over the spread of the signal around that line (std with the line\'s share taken out).' },
  ],
  create(ctx, q) {
    const applies = q.offset.quantities.includes(ctx.quantity);
    const win = Math.max(1, Math.round(ctx.sampleRate));
    const shared = momentsOf(ctx);
    let wmin = Infinity, wmax = -Infinity;
    // A trend through the window means, not their range: an oscillation below 1 Hz swings its 1 s means both ways around none.
    const line = emptyLineSums();
    // Means of windows of `win` finite samples, from the channel's fused pass.
    if (applies) finiteWindowsOf(ctx, win).listen((wsum, _, wn) => { const m = wsum / wn; if (m < wmin) wmin = m; if (m > wmax) wmax = m; addPoint(line, m); });
    return {
      push() {},
      finish() {
        const threshold = `warn: |mean| > ${q.offset.warn_ratio}·std, or the line through the 1 s means rising or falling > ${q.offset.warn_drift_ratio}·std around it across the recording (quantities ${q.offset.quantities.join(', ')})`;
        const m = shared.moments();
        if (!applies || m.n === 0) {
          // A channel left undeclared has no quantity: the check is then missed rather than not meant.
          const undeclared = !ctx.declared && m.n > 0;
          ctx.flag({ name: 'offset', severity: 'ok', value: null, threshold, evidence: {}, message: `not assessed for quantity "${ctx.quantity}"`, ...(undeclared ? { not_assessed: 'declare the channels with their quantity in archive.yaml' } : {}) });
          return { offset_ratio: null, drift_ratio: null };
        }
        const mean = m.mean, std = Math.sqrt(m.m2 / m.n);
        const ratio = std > 0 ? Math.abs(mean) / std : null;
        const trend = trendOf(fittedLine(line), line.count, std);
        const drift = std > 0 && trend ? trend.ratio : null;
        const issues: string[] = [];
        if (ratio != null && ratio > q.offset.warn_ratio) issues.push(`mean ${mean.toPrecision(3)} ${ctx.unit} is ${ratio.toFixed(2)} standard deviations from zero`);
        const trendWarns = trend != null && drift != null && drift > q.offset.warn_drift_ratio;
        if (trend && trendWarns) issues.push(`the 1 s means ${trend.rise > 0 ? 'rise' : 'fall'} by ${Math.abs(trend.rise).toPrecision(3)} ${ctx.unit} along a straight line across the recording (${Number.isFinite(drift) ? `${drift.toFixed(2)} standard deviations of the signal around it` : 'the signal has no spread around it'})`);
        const severity: Severity = issues.length ? 'warn' : 'ok';
        const gravity = ratio != null && ratio > q.offset.warn_ratio ? gravityHint(ctx.quantity, ctx.unit, mean) : '';
        const excess = rmsExcess(mean, std, trend?.spread ?? std);
        ctx.flag({
          name: 'offset', severity, value: ratio, threshold,
          evidence: {
            mean, std, window_mean_min: Number.isFinite(wmin) ? wmin : null, window_mean_max: Number.isFinite(wmax) ? wmax : null,
            trend_rise: trend?.rise ?? null, trend_share_of_window_means: trend?.explained ?? null, std_around_trend: trend?.spread ?? null,
          },
          message: issues.length ? `${issues.join('; ')}: a ${ctx.quantity} signal should carry none, and RMS and peak include it (${excess <= 9 ? `RMS reads ${pct(excess)} high${trendWarns ? ', more where the drift is a step or a curve rather than a line' : ''}` : 'RMS describes the offset and trend, not the signal'}); check the sensor's bias, the coupling (AC/DC) and thermal drift${gravity}` : `mean ${mean.toPrecision(3)} ${ctx.unit}, no drift beyond the threshold`,
        });
        return { offset_ratio: ratio, drift_ratio: drift != null && Number.isFinite(drift) ? drift : null };
      },
    };
  },
};

/**
 * The trend of `windows` window means along their fitted line: its rise across them (the line's slope per window × windows),
 * the share of the means' variance it explains, the signal's spread around it (std with a ramp's variance, rise²/12, taken
 * out; derived: the variance of a uniform ramp), and the rise in units of that spread (Infinity when the line is all there is).
 */
export function trendOf(line: { slope: number; explained: number } | null, windows: number, std: number) {
  if (!line) return null;
  const rise = line.slope * windows;
  const spread = Math.sqrt(Math.max(0, std * std - (rise * rise) / 12));
  return { rise, explained: line.explained, spread, ratio: spread > 0 ? Math.abs(rise) / spread : rise !== 0 ? Infinity : 0 };
}

// What an offset and a trend add to RMS over the signal's own spread (derived: variances add): √((mean² + std²) / spread²) − 1,
// √(1 + r²) − 1 for an offset of r standard deviations alone and √(1 + d²/12) − 1 for a ramp of d alone.
export const rmsExcess = (mean: number, std: number, spread: number) => (spread > 0 ? Math.sqrt((mean * mean + std * std) / (spread * spread)) - 1 : Infinity);

/** A mean within 5 % of 1 g on an accelerometer is gravity on a DC-coupled sensor: the message says how to take it out. */
export function gravityHint(quantity: string, unit: string, mean: number): string {
  const perUnit = metresPerSecond2(unit);
  const g = perUnit ? STANDARD_GRAVITY / perUnit : null;
  if (quantity !== 'acceleration' || g == null || Math.abs(Math.abs(mean) / g - 1) > 0.05) return '';
  return `. The mean is about 1 g: a DC-coupled accelerometer carrying gravity; add ${-Math.sign(mean) * g} to the channel's offset in archive.yaml to take it out, or read std, which excludes it`;
}
