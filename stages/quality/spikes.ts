// Spikes: isolated samples far outside a robust spread: median and 1.4826 × median absolute deviation (Hampel 1974), estimated chunk by chunk.
import type { StageDefinition } from '../stage.js';
import { pct, secs, type QualityThresholds, type Severity } from './flag.js';

/** Median of the values (sorts a copy). */
function median(v: Float64Array): number {
  const s = Float64Array.from(v).sort();
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2;
}

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
    return {
      push(x) {
        const finite = x.filter(Number.isFinite);
        if (finite.length < 16) { n += x.length; return; }
        // Every 4th sample is plenty for the median and MAD, at a quarter of the sorting.
        const sub = finite.filter((_, i) => i % 4 === 0);
        const med = median(sub);
        const mad = median(sub.map((v) => Math.abs(v - med)));
        const limit = k * Math.max(1.4826 * mad, ctx.stepSize ?? 0, 1e-300);
        for (let i = 0; i < x.length; i++, n++) {
          settle(n);
          if (!(Math.abs(x[i] - med) > limit)) continue;
          if (pending >= 0 && n - pending <= W) pending = -1; // two outliers close together: neither is isolated
          else if (n - lastOut > W) pending = n;
          lastOut = n;
        }
      },
      finish() {
        settle(Infinity);
        const fraction = n ? count / n : 0;
        const severity: Severity = count === 0 ? 'ok' : fraction >= q.spikes.fail_fraction ? 'fail' : 'warn';
        ctx.flag({
          name: 'spikes', severity, value: count,
          threshold: `warn: any isolated sample beyond ${k} robust standard deviations; fail: ≥ ${pct(q.spikes.fail_fraction)} of samples`,
          evidence: { samples: count, first_s: first >= 0 ? first / ctx.sampleRate : null },
          message: count ? `${count} isolated spikes, first at ${secs(first / ctx.sampleRate)}: electrical interference or converter glitches; peak and crest factor are suspect` : 'no isolated spikes',
        });
        return { spike_count: count };
      },
    };
  },
};
