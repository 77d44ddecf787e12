// Peak capture: at r samples per cycle the largest sample of a sine can miss its peak by up to 1 − cos(π/r) (derived; ~10 per cycle is common practice).
import type { StageDefinition } from '../stage.js';
import { pct, type QualityThresholds } from './flag.js';

/** Worst-case shortfall of the largest sample below a sine's peak at r samples per cycle: the peak falls midway between two samples. */
export const peakUnderestimate = (samplesPerCycle: number) => 1 - Math.cos(Math.PI / samplesPerCycle);

export const peakCapture: StageDefinition<QualityThresholds> = {
  group: 'quality',
  columns: () => [
    { name: 'samples_per_cycle', unit: '1', description: 'Sample rate / declared highest frequency.' },
    { name: 'peak_underestimate', unit: '1', description: 'Worst-case shortfall of a sampled peak at the declared highest frequency: 1 − cos(π·f/fs).' },
  ],
  create(ctx, q) {
    return {
      push() {},
      finish() {
        const f = ctx.maxFrequencyHz, need = q.peak_capture.warn_samples_per_cycle;
        if (!f) {
          ctx.flag({ name: 'peak_capture', severity: 'ok', value: null, threshold: `warn below ${need} samples per cycle`, evidence: {}, message: 'not assessed: no highest frequency declared' });
          return { samples_per_cycle: null, peak_underestimate: null };
        }
        const r = ctx.sampleRate / f;
        const under = r > 1 ? peakUnderestimate(r) : 1;
        const severity = r < need ? 'warn' : 'ok';
        ctx.flag({
          name: 'peak_capture', severity, value: r, threshold: `warn below ${need} samples per cycle`,
          evidence: { declared_hz: f, worst_underestimate: under },
          message: `${r.toFixed(2)} samples per cycle at ${f} Hz: a peak can read up to ${pct(under)} low${severity === 'ok' ? '' : '; treat peak and crest factor as lower bounds, or sample faster'}`,
        });
        return { samples_per_cycle: r, peak_underestimate: under };
      },
    };
  },
};
