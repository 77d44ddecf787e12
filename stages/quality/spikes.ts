// Spikes: short bursts far outside a robust spread (median and 1.4826 × median absolute deviation, Hampel 1974, estimated
// chunk by chunk) that stand out from their neighbours on both sides, as an impulse does and a ringing waveform does not,
// and beyond as many robust standard deviations of the samples on each side of them, so a level that rises is no spike.
import type { StageDefinition } from '../stage.js';
import { missingOf } from '../fused/missing.js';
import { robustOutliersOf } from '../fused/robust-outliers.js';
import { NO_FINITE_SAMPLES, noFiniteSamples, pct, secs, type QualityThresholds, type Severity } from './flag.js';
import { SpikeBursts } from './spike-bursts.js';

export { median } from '../dsp/median.js';

export const spikes: StageDefinition<QualityThresholds> = {
  group: 'quality',
  section: null,
  spectral: false,
  columns: () => [{ name: 'spike_count', unit: '1', description: 'Samples in spikes: bursts of 1 to 3 samples beyond the robust-sigma threshold of their chunk and of the 256 samples on each side, whose neighbours within 8 samples on both sides stay under half their excursion; null when the channel has no finite samples.' }],
  create(ctx, q) {
    const k = q.spikes.robust_sigmas;
    const floor = ctx.stepSize ?? 0;
    const bursts = new SpikeBursts(undefined, undefined, undefined, undefined, k, floor);
    // The fused pass hands over each outlying sample in order before the chunk reaches the stages; the bursts are judged
    // from the samples around them as each chunk arrives (no pass of their own).
    const outliers = robustOutliersOf(ctx, k, floor, (at) => bursts.outlier(at));
    // The dropout flag's count (made there anyway), read at the end: a channel with no finite sample has none to search.
    const missing = missingOf(ctx);
    let n = 0;
    return {
      push(x) { bursts.chunk(x, n, outliers.median); n += x.length; },
      finish() {
        bursts.end();
        const count = bursts.count, samples = bursts.samples, first = bursts.first;
        const fraction = n ? samples / n : 0;
        const threshold = `warn: any burst of 1 to ${bursts.widest} samples beyond ${k} robust standard deviations of its chunk and of the ${bursts.reach} samples on each side, whose neighbours within ${bursts.guard} samples either side stay under ${pct(bursts.fraction)} of its excursion; fail: ≥ ${pct(q.spikes.fail_fraction)} of samples in such bursts${ctx.tacho != null ? ' (not on a tacho channel)' : ''}`;
        if (noFiniteSamples(n, n - missing.count)) {
          // Nothing was searched, so no spike was found: null, not the 0 of a clean channel; the dropout flag fails it.
          ctx.flag({ name: 'spikes', severity: 'ok', value: null, threshold, evidence: {}, message: NO_FINITE_SAMPLES });
          return { spike_count: null };
        }
        // A tacho's pulses one sample wide are isolated samples far outside the spread by design; pulse_train judges them.
        const pulses = ctx.tacho != null;
        const severity: Severity = samples === 0 || pulses ? 'ok' : fraction >= q.spikes.fail_fraction ? 'fail' : 'warn';
        ctx.flag({
          name: 'spikes', severity, value: samples, threshold,
          evidence: { samples, spikes: count, first_s: first >= 0 ? first / ctx.sampleRate : null },
          message: pulses ? (samples ? `not judged on a tacho channel: its ${samples} isolated samples are pulses one sample wide by design, which pulse_train judges` : 'not judged on a tacho channel, whose pulses one sample wide would stand out by design; pulse_train judges them')
            : samples ? `${count} spikes (${samples} samples in bursts of 1 to ${bursts.widest} standing out from their neighbours on both sides), first at ${secs(first / ctx.sampleRate)}: electrical interference or converter glitches; peak and crest factor are suspect` : 'no spikes',
        });
        return { spike_count: samples };
      },
    };
  },
};
