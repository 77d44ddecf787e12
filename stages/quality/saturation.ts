// Saturation: samples at or beyond the instrument range, or piled on the converter's extreme codes when no range is declared.
import type { StageDefinition } from '../stage.js';
import { limitRunsOf } from '../fused/limit-runs.js';
import { momentsOf } from '../fused/moments.js';
import { NO_FINITE_SAMPLES, noFiniteSamples, pct, secs, type QualityThresholds } from './flag.js';

export const saturation: StageDefinition<QualityThresholds> = {
  group: 'quality',
  section: null,
  spectral: false,
  columns: () => [{ name: 'saturation_fraction', unit: '1', description: 'Fraction of samples at or beyond the instrument range (or on the extreme converter codes when no range is declared); null when the channel has no finite samples.' }],
  create(ctx, q) {
    // Half a converter step of tolerance, for rounding in the scale (the declared step on floating-point samples).
    const step = ctx.stepSize ?? ctx.declaredGrid?.step ?? null;
    const tol = step != null ? step / 2 : 0;
    const limits = saturationLimits(ctx.range, ctx.fullScale);
    const [lo, hi] = limits ? [limits[0] + tol, limits[1] - tol] : [-Infinity, Infinity];
    // Samples at the limits are counted in the channel's fused pass.
    // Of those, the samples past the limits by more than a clipped flat top lies from them, and the extremes, tell clipping
    // from data the declaration puts outside its range.
    const margin = limits ? BEYOND_MARGIN * (limits[1] - limits[0]) : 0;
    const runs = limits ? limitRunsOf(ctx, lo, hi, limits[0] - margin, limits[1] + margin) : null;
    const moments = momentsOf(ctx);
    let n = 0;
    return {
      push(x) { n += x.length; },
      finish() {
        const count = runs?.count ?? 0, first = runs?.first ?? -1, longest = runs?.longest ?? 0, longestEnd = runs?.longestEnd ?? 0;
        const codesInside = ctx.range != null && limits != null && (limits[0] !== ctx.range[0] || limits[1] !== ctx.range[1]);
        const source = ctx.range ? `instrument range [${ctx.range.join(', ')}] ${ctx.unit}${codesInside ? ' (or the converter\'s extreme codes, where they lie inside it)' : ''}` : 'extreme converter codes';
        const threshold = `warn: any sample; fail: ≥ ${pct(q.saturation.fail_fraction)} of samples or ${q.saturation.fail_run} in a row`;
        if (!limits) {
          ctx.flag({ name: 'saturation', severity: 'ok', value: null, threshold, evidence: {}, message: 'not assessed: no instrument range declared and no converter full scale known; declare range in archive.yaml', not_assessed: 'declare range in archive.yaml' });
          return { saturation_fraction: null };
        }
        const { min, max, n: finite } = moments.moments();
        if (noFiniteSamples(n, finite)) {
          // No sample to hold against the limits: null, not the 0 of a channel that kept within them; the dropout flag fails it.
          ctx.flag({ name: 'saturation', severity: 'ok', value: null, threshold, evidence: {}, message: NO_FINITE_SAMPLES });
          return { saturation_fraction: null };
        }
        const fraction = n ? count / n : 0;
        const severity = count === 0 ? 'ok' : fraction >= q.saturation.fail_fraction || longest >= q.saturation.fail_run ? 'fail' : 'warn';
        const rate = ctx.sampleRate;
        const beyond = runs?.far ?? 0;
        const furthest = furthestPast(limits, min, max);
        const found = `${count} samples (${pct(fraction)}) at or beyond the ${source}, first at ${secs(first / rate)}, longest run ${longest}`;
        const past = count > 0 && pastTheRange(count, beyond, furthest.by, limits[1] - limits[0]);
        ctx.flag({
          name: 'saturation', severity, value: fraction, threshold,
          evidence: {
            samples: count, first_s: first >= 0 ? first / rate : null, longest_run: longest, longest_run_at_s: longest ? (longestEnd - longest + 1) / rate : null,
            ...(count > 0 ? { beyond_samples: beyond, furthest_value: furthest.by > 0 ? furthest.value : null } : {}),
          },
          message: count === 0 ? `no sample at the ${source}`
            : past ? `${found}; ${beyond} of them (${pct(beyond / count)}) lie beyond it by more than ${pct(BEYOND_MARGIN)} of its span${furthest.by > 0 ? `, the furthest at ${Number(furthest.value.toPrecision(6))} ${ctx.unit}` : ''}: a signal clipped by the instrument rests at its limit, so these were not clipped there; check this channel's range and scale (and offset) in archive.yaml first, since a wrong declaration puts the data outside the range; if they are right, the input went past the range the instrument is rated for, and peak, crest factor and kurtosis cannot be trusted: retake the measurement with a larger range`
            : `${found}: clipped data says nothing about the input beyond the range, so peak, crest factor and kurtosis read low; retake the measurement with a larger range`,
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

/** How far past its limits a clipped flat top may lie, as a share of their span (scale rounding, an amplifier's rail): our choice. */
export const BEYOND_MARGIN = 0.01;

/** The extreme sample furthest outside the limits, and by how much (0 when both lie within them, or none is finite). */
export function furthestPast(limits: [number, number], min: number, max: number): { value: number; by: number } {
  if (!(min <= max)) return { value: NaN, by: 0 };
  const above = max - limits[1], below = limits[0] - min;
  return above >= below ? { value: max, by: Math.max(0, above) } : { value: min, by: Math.max(0, below) };
}

/**
 * Whether samples counted at or beyond the limits were not clipped there: a clipped signal rests at the limit, so most of
 * them lying past it (`share` of those counted, beyond the margin), or any lying far past it (`far` of the limits' span),
 * points at the declared range or scale rather than at the instrument. Both shares our choice.
 */
export function pastTheRange(count: number, beyond: number, furthestBy: number, span: number, share = 0.5, far = 0.1): boolean {
  return count > 0 && (beyond >= share * count || furthestBy >= far * span);
}
