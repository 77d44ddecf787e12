// Offset: what a mean far from zero and its changes (a trend, a step of the 1 s window means) add to RMS, for quantities that should have none.
import type { StageDefinition } from '../stage.js';
import { momentsOf } from '../fused/moments.js';
import { finiteWindowsOf } from '../fused/finite-windows.js';
import { NO_FINITE_SAMPLES, noFiniteSamples, pct, secs, type QualityThresholds, type Severity } from './flag.js';
import { metresPerSecond2, STANDARD_GRAVITY } from '../acceleration-units.js';
import { addPoint, emptyLineSums, fittedLine } from '../dsp/line-fit.js';
import { levelStepFit, type LevelStepFit } from '../dsp/level-step-fit.js';
import { meanWander } from '../dsp/mean-wander.js';
import { withArticle } from './article.js';

export const offset: StageDefinition<QualityThresholds> = {
  group: 'quality',
  section: null,
  spectral: false,
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
    // Every window's mean too (8 bytes a second), for the slow part an offset and its changes carry (levelStepFit).
    let means = new Float64Array(64), windows = 0;
    const keep = (m: number) => { if (windows === means.length) { const more = new Float64Array(means.length * 2); more.set(means); means = more; } means[windows++] = m; };
    // Means of windows of `win` finite samples, from the channel's fused pass.
    if (applies) finiteWindowsOf(ctx, win).listen((wsum, _, wn) => { const m = wsum / wn; if (m < wmin) wmin = m; if (m > wmax) wmax = m; addPoint(line, m); keep(m); });
    return {
      push() {},
      finish() {
        const threshold = `warn: RMS > ${pct(q.offset.warn_rms_excess)} above the RMS with the slow part of the 1 s means (a level, a line and one step) taken out, |mean| > ${q.offset.warn_ratio}·std, or the line through the 1 s means rising or falling > ${q.offset.warn_drift_ratio}·std around it across the recording, each only where that slow part's RMS is ≥ ${q.offset.warn_above_wander} × the 1 s means' wander from one second to the next (quantities ${q.offset.quantities.join(', ')})`;
        const m = shared.moments();
        if (!applies || m.n === 0) {
          // A channel left undeclared has no quantity: the check is then missed rather than not meant.
          const undeclared = !ctx.declared && m.n > 0;
          ctx.flag({ name: 'offset', severity: 'ok', value: null, threshold, evidence: {}, message: applies && noFiniteSamples(m.n + m.nonFinite, m.n) ? NO_FINITE_SAMPLES : `not assessed for quantity "${ctx.quantity}"`, ...(undeclared ? { not_assessed: 'declare the channels with their quantity in archive.yaml' } : {}) });
          return { offset_ratio: null, drift_ratio: null };
        }
        const mean = m.mean, std = Math.sqrt(m.m2 / m.n);
        const ratio = std > 0 ? Math.abs(mean) / std : null;
        const trend = trendOf(fittedLine(line), line.count, std);
        const drift = std > 0 && trend ? trend.ratio : null;
        const slow = slowPart(means.subarray(0, windows), mean, win, m.m2, m.n);
        const excess = rmsExcess(mean, std, slow.spread);
        const issues: string[] = [];
        const meanWarns = ratio != null && ratio > q.offset.warn_ratio;
        if (meanWarns) issues.push(`mean ${mean.toPrecision(3)} ${ctx.unit} is ${ratio.toFixed(2)} standard deviations from zero`);
        const trendWarns = trend != null && drift != null && drift > q.offset.warn_drift_ratio;
        if (trend && trendWarns) issues.push(`the 1 s means ${trend.rise > 0 ? 'rise' : 'fall'} by ${Math.abs(trend.rise).toPrecision(3)} ${ctx.unit} along a straight line across the recording (${Number.isFinite(drift) ? `${drift.toFixed(2)} standard deviations of the signal around it` : 'the signal has no spread around it'})`);
        // The offset and its changes together: each alone may stay under its threshold while together they raise RMS by more.
        // A channel that never moves (std 0) is the flatline flag's, as its ratio is none.
        if (std > 0 && excess > q.offset.warn_rms_excess) {
          // A step no larger than the means' own wander could make by chance is not named (the same ratio the slow part needs).
          const wander = meanWander(means.subarray(0, windows));
          if (slow.stepAt >= 0 && Math.abs(slow.step) >= q.offset.warn_above_wander * wander) issues.push(`the 1 s means step by ${slow.step > 0 ? '+' : '−'}${Math.abs(slow.step).toPrecision(3)} ${ctx.unit} at ${secs((slow.stepAt * win) / ctx.sampleRate)}`);
          else if (!meanWarns && !trendWarns) issues.push(`the mean ${mean.toPrecision(3)} ${ctx.unit} and the trend of the 1 s means together`);
        }
        // What a live signal's own slow content could have made by chance does not warn: the slow part must stand above the wander.
        const standing = standOut(means.subarray(0, windows), slow.fit);
        const chance = issues.length > 0 && standing < q.offset.warn_above_wander;
        const severity: Severity = issues.length && !chance ? 'warn' : 'ok';
        const gravity = meanWarns ? gravityHint(ctx.quantity, ctx.unit, mean) : '';
        ctx.flag({
          name: 'offset', severity, value: ratio, threshold,
          evidence: {
            mean, std, window_mean_min: Number.isFinite(wmin) ? wmin : null, window_mean_max: Number.isFinite(wmax) ? wmax : null,
            trend_rise: trend?.rise ?? null, trend_share_of_window_means: trend?.explained ?? null, std_around_trend: trend?.spread ?? null,
            slow_part_over_wander: Number.isFinite(standing) ? standing : null,
            rms_excess: std > 0 && Number.isFinite(excess) ? excess : null, rms_without_slow_part: slow.spread, step: slow.stepAt >= 0 ? slow.step : null, step_at_s: slow.stepAt >= 0 ? (slow.stepAt * win) / ctx.sampleRate : null,
          },
          message: chance ? `${issues.join('; ')}, but that slow part stands only ${standing.toFixed(1)} times above the 1 s means' wander from one second to the next (a warning needs ${q.offset.warn_above_wander}): the signal's own content below 1 Hz makes as much by chance in a recording this long, so it is read as content, not an offset`
            : issues.length ? `${issues.join('; ')}: ${withArticle(ctx.quantity)} signal should carry none, and RMS and peak include it (${excess <= 9 ? `RMS reads ${pct(excess)} high` : 'RMS describes the offset and its changes, not the signal'}); check the sensor's bias, the coupling (AC/DC) and thermal drift${gravity}` : `mean ${mean.toPrecision(3)} ${ctx.unit}${std > 0 ? `, RMS ${pct(Math.max(0, excess))} above the signal with its slow part taken out` : ', no spread'}`,
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

/**
 * The signal's RMS with its slow part taken out (`spread`): the mean, and the level, line and step the 1 s means (`means` of
 * `win` samples each, as read) take beyond it (levelStepFit on the means less the mean). Within a window the fit is one value,
 * so it takes win·Σf² from the spread's sum of squares `m2` over `n` samples (least squares projects; samples past the last
 * whole window keep theirs). The fit goes on with it, for standOut.
 */
export function slowPart(means: Float64Array, mean: number, win: number, m2: number, n: number) {
  const centred = means.map((v) => v - mean);
  const fit = levelStepFit(centred);
  const spread = n > 0 ? Math.sqrt(Math.max(0, m2 - win * fit.explained) / n) : 0;
  // A step is named where it alone takes more than a line alone: a ramp is a trend, a level that jumps a step.
  const stepped = fit.stepAt >= 0 && fit.stepAlone > fit.line;
  return { spread, stepAt: stepped ? fit.stepAt : -1, step: stepped ? fit.step : 0, fit };
}

/**
 * How far the slow part of the 1 s means (their least-squares level, line and one step, the mean included) stands above their
 * wander from one second to the next (meanWander): its RMS over the windows over that wander. Infinity where the means do not
 * wander (a clean offset, or fewer than three windows, where nothing tells the two apart). `fit` may be that of the means less
 * a constant (slowPart's): least squares with a level among its regressors fits the line and the step alike whatever level the
 * means sit at (derived), so only the level's share, (Σm)²/W, is taken again from the means themselves.
 */
export function standOut(means: Float64Array, fit: LevelStepFit = levelStepFit(means)): number {
  const W = means.length;
  let sum = 0;
  for (let k = 0; k < W; k++) sum += means[k];
  const slow = W ? Math.sqrt(Math.max(0, fit.explained - fit.level + (sum * sum) / W) / W) : 0;
  const wander = meanWander(means);
  return wander > 0 ? slow / wander : slow > 0 ? Infinity : 0;
}

// What an offset and its changes add to RMS over the signal's own spread (derived: variances add): √((mean² + std²) / spread²) − 1,
// √(1 + r²) − 1 for an offset of r standard deviations alone and √(1 + d²/12) − 1 for a ramp of d alone.
export const rmsExcess = (mean: number, std: number, spread: number) => (spread > 0 ? Math.sqrt((mean * mean + std * std) / (spread * spread)) - 1 : Infinity);

/** A mean within 5 % of 1 g on an accelerometer is gravity on a DC-coupled sensor: the message says how to take it out. */
export function gravityHint(quantity: string, unit: string, mean: number): string {
  const perUnit = metresPerSecond2(unit);
  const g = perUnit ? STANDARD_GRAVITY / perUnit : null;
  if (quantity !== 'acceleration' || g == null || Math.abs(Math.abs(mean) / g - 1) > 0.05) return '';
  return `. The mean is about 1 g: a DC-coupled accelerometer carrying gravity; add ${-Math.sign(mean) * g} to the channel's offset in archive.yaml to take it out, or read std, which excludes it`;
}
