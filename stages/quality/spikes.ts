// Spikes: isolated samples far outside a robust spread: median and 1.4826 × median absolute deviation (Hampel 1974), estimated chunk by chunk.
import type { StageDefinition } from '../stage.js';
import { robustOutliersOf } from '../fused/robust-outliers.js';
import { pct, secs, type QualityThresholds, type Severity } from './flag.js';

export { median } from '../dsp/median.js';

export const spikes: StageDefinition<QualityThresholds> = {
  group: 'quality',
  columns: () => [{ name: 'spike_count', unit: '1', description: 'Isolated samples beyond the robust-sigma threshold of their chunk.' }],
  create(ctx, q) {
    const k = q.spikes.robust_sigmas;
    // Isolated: no other outlying sample within this many samples either side (a ringing impact is not a spike).
    const W = 8;
    let n = 0, count = 0, first = -1, lastOut = -Infinity, pending = -1;
    const settle = (i: number) => {
      // The pending outlier is a spike when nothing else stood out within W samples before or after it.
      if (pending >= 0 && i - pending > W) { if (count++ === 0) first = pending; pending = -1; }
    };
    // The fused pass hands over each outlying sample in order; a pending one is settled when the next arrives or at the end.
    robustOutliersOf(ctx, k, ctx.stepSize ?? 0, (at) => {
      settle(at);
      if (pending >= 0 && at - pending <= W) pending = -1; // two outliers close together: neither is isolated
      else if (at - lastOut > W) pending = at;
      lastOut = at;
    });
    return {
      push(x) { n += x.length; },
      finish() {
        settle(Infinity);
        const fraction = n ? count / n : 0;
        // A tacho's pulses one sample wide are isolated samples far outside the spread by design; pulse_train judges them.
        const pulses = ctx.tacho != null;
        const severity: Severity = count === 0 || pulses ? 'ok' : fraction >= q.spikes.fail_fraction ? 'fail' : 'warn';
        ctx.flag({
          name: 'spikes', severity, value: count,
          threshold: `warn: any isolated sample beyond ${k} robust standard deviations; fail: ≥ ${pct(q.spikes.fail_fraction)} of samples${pulses ? ' (not on a tacho channel)' : ''}`,
          evidence: { samples: count, first_s: first >= 0 ? first / ctx.sampleRate : null },
          message: pulses && count ? `not judged on a tacho channel: its ${count} isolated samples are pulses one sample wide by design, which pulse_train judges`
            : count ? `${count} isolated spikes, first at ${secs(first / ctx.sampleRate)}: electrical interference or converter glitches; peak and crest factor are suspect` : 'no isolated spikes',
        });
        return { spike_count: count };
      },
    };
  },
};
