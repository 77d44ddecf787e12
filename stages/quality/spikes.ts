// Spikes: isolated samples far outside a robust spread: median and 1.4826 × median absolute deviation (Hampel 1974), estimated chunk by chunk.
import type { StageDefinition } from '../stage.js';
import { pct, secs, type QualityThresholds, type Severity } from './flag.js';

const STRIDE = 8;

// k-th smallest by quickselect (Hoare 1961, Algorithm 65 FIND), reordering v in place: linear time on average.
function select(v: Float64Array, k: number): number {
  let lo = 0, hi = v.length - 1;
  while (lo < hi) {
    const pivot = v[(lo + hi) >> 1];
    let i = lo, j = hi;
    while (i <= j) {
      while (v[i] < pivot) i++;
      while (v[j] > pivot) j--;
      if (i <= j) { const t = v[i]; v[i] = v[j]; v[j] = t; i++; j--; }
    }
    if (k <= j) hi = j; else if (k >= i) lo = i; else return v[k];
  }
  return v[k];
}

/** Median of the values (reorders them). */
export function median(v: Float64Array): number {
  const m = v.length >> 1;
  if (v.length % 2) return select(v, m);
  const upper = select(v, m);
  let lower = -Infinity;
  for (let i = 0; i < m; i++) if (v[i] > lower) lower = v[i]; // after selecting m, everything before it is ≤ v[m]
  return (lower + upper) / 2;
}

export const spikes: StageDefinition<QualityThresholds> = {
  group: 'quality',
  columns: () => [{ name: 'spike_count', unit: '1', description: 'Isolated samples beyond the robust-sigma threshold of their chunk.' }],
  create(ctx, q) {
    const k = q.spikes.robust_sigmas;
    // Isolated: no other outlying sample within this many samples either side (a ringing impact is not a spike).
    const W = 8;
    let n = 0, count = 0, first = -1, lastOut = -Infinity, pending = -1;
    let sub = new Float64Array(0);
    const settle = (i: number) => {
      // The pending outlier is a spike when nothing else stood out within W samples before or after it.
      if (pending >= 0 && i - pending > W) { if (count++ === 0) first = pending; pending = -1; }
    };
    return {
      push(x) {
        if (sub.length < Math.ceil(x.length / STRIDE)) sub = new Float64Array(Math.ceil(x.length / STRIDE));
        // Every STRIDE-th finite sample is plenty for the median and MAD of a chunk, at a fraction of the sorting.
        let m = 0;
        for (let i = 0; i < x.length; i += STRIDE) if (Number.isFinite(x[i])) sub[m++] = x[i];
        if (m < 16) { n += x.length; return; }
        const part = sub.subarray(0, m);
        const med = median(part);
        for (let i = 0; i < m; i++) part[i] = Math.abs(part[i] - med);
        const mad = median(part);
        const limit = k * Math.max(1.4826 * mad, ctx.stepSize ?? 0, 1e-300);
        for (let i = 0; i < x.length; i++, n++) {
          settle(n);
          const d = x[i] - med;
          if (!(d > limit || d < -limit)) continue;
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
