// Saturation: samples at or beyond the instrument range, or piled on the converter's extreme codes when no range is declared.
import type { StageDefinition } from '../stage.js';
import { limitRunsOf } from '../fused/limit-runs.js';
import { pct, secs, type QualityThresholds } from './flag.js';

export const saturation: StageDefinition<QualityThresholds> = {
  group: 'quality',
  columns: () => [{ name: 'saturation_fraction', unit: '1', description: 'Fraction of samples at or beyond the instrument range (or on the extreme converter codes when no range is declared).' }],
  create(ctx, q) {
    // Half a converter step of tolerance, for rounding in the scale.
    const tol = ctx.stepSize != null ? ctx.stepSize / 2 : 0;
    const limits = saturationLimits(ctx.range, ctx.fullScale);
    const [lo, hi] = limits ? [limits[0] + tol, limits[1] - tol] : [-Infinity, Infinity];
    // Samples at the limits are counted in the channel's fused pass.
    const runs = limits ? limitRunsOf(ctx, lo, hi) : null;
    let n = 0;
    return {
      push(x) { n += x.length; },
      finish() {
        const count = runs?.count ?? 0, first = runs?.first ?? -1, longest = runs?.longest ?? 0, longestEnd = runs?.longestEnd ?? 0;
        const codesInside = ctx.range != null && limits != null && (limits[0] !== ctx.range[0] || limits[1] !== ctx.range[1]);
        const source = ctx.range ? `instrument range [${ctx.range.join(', ')}] ${ctx.unit}${codesInside ? ' (or the converter\'s extreme codes, where they lie inside it)' : ''}` : 'extreme converter codes';
        const threshold = `warn: any sample; fail: ≥ ${pct(q.saturation.fail_fraction)} of samples or ${q.saturation.fail_run} in a row`;
        if (!limits) {
          ctx.flag({ name: 'saturation', severity: 'ok', value: null, threshold, evidence: {}, message: 'not assessed: no instrument range declared and no converter full scale known; declare range in archive.yaml' });
          return { saturation_fraction: null };
        }
        const fraction = n ? count / n : 0;
        const severity = count === 0 ? 'ok' : fraction >= q.saturation.fail_fraction || longest >= q.saturation.fail_run ? 'fail' : 'warn';
        const rate = ctx.sampleRate;
        ctx.flag({
          name: 'saturation', severity, value: fraction, threshold,
          evidence: { samples: count, first_s: first >= 0 ? first / rate : null, longest_run: longest, longest_run_at_s: longest ? (longestEnd - longest + 1) / rate : null },
          message: count === 0 ? `no sample at the ${source}`
            : `${count} samples (${pct(fraction)}) at or beyond the ${source}, first at ${secs(first / rate)}, longest run ${longest}: clipped data says nothing about the input beyond the range, so peak, crest factor and kurtosis read low; retake the measurement with a larger range`,
        });
        return { saturation_fraction: fraction };
      },
    };
  },
};

/**
 * Where a channel clips: the narrower of the instrument range and the converter's extreme codes. A two's-complement
 * converter's most positive code is one step short of full scale (common practice), so a range declared as the
 * converter's full scale is reached only on the negative side; the codes themselves are the limit there.
 */
export function saturationLimits(range: [number, number] | null, fullScale: [number, number] | null): [number, number] | null {
  if (!range) return fullScale;
  if (!fullScale) return range;
  return [Math.max(range[0], fullScale[0]), Math.min(range[1], fullScale[1])];
}
