// Peak capture: how far the largest sample falls short of the true, band-limited peak, estimated by 4× oversampling
// (ITU-R BS.1770-4 Annex 2); beside it the worst case for a sine at the declared highest frequency, 1 − cos(π·f/fs) (derived).
import { simdPeakScan } from '../dsp/fft-simd.js';
import { TAP_PAIRS, TruePeak } from '../dsp/true-peak.js';
import type { StageDefinition } from '../stage.js';
import { pct, type QualityThresholds, type Severity } from './flag.js';

/** Worst-case shortfall of the largest sample below a sine's peak at r samples per cycle: the peak falls midway between two samples. */
export const peakUnderestimate = (samplesPerCycle: number) => 1 - Math.cos(Math.PI / samplesPerCycle);

/** Common practice leaves content up to fs/2.56; without a declared highest frequency the true peak assumes that much. */
const ASSUMED_RATIO = 2.56;

export const peakCapture: StageDefinition<QualityThresholds> = {
  group: 'quality',
  columns: () => [
    { name: 'samples_per_cycle', unit: '1', description: 'Sample rate / declared highest frequency.' },
    { name: 'peak_underestimate', unit: '1', description: 'Worst-case shortfall of a sampled peak at the declared highest frequency: 1 − cos(π·f/fs).' },
    { name: 'true_peak', unit: '[unit]', description: 'Largest magnitude of the band-limited signal between the samples, by 4× oversampling (ITU-R BS.1770-4 Annex 2).' },
    { name: 'peak_shortfall', unit: '1', description: 'How far the largest sample falls below the true peak: 1 − peak / true_peak.' },
  ],
  create(ctx, q) {
    const fs = ctx.sampleRate, f = ctx.maxFrequencyHz;
    // Candidates for interpolation come within cos(π·f/fs) of the running true peak (see TruePeak); f is at most fs/2.
    const tracker = new TruePeak(Math.cos(Math.PI * Math.min(0.5, f ? f / fs : 1 / ASSUMED_RATIO)), simdPeakScan(TAP_PAIRS));
    return {
      push(x) { tracker.push(x); },
      finish() {
        const { note_shortfall: noteAt, warn_shortfall: warnAt } = q.peak_capture;
        const r = f ? fs / f : null;
        const bound = r == null ? null : r > 1 ? peakUnderestimate(r) : 1;
        const { samplePeak, truePeak } = tracker.result();
        const threshold = `note above ${pct(noteAt)}, warn above ${pct(warnAt)} shortfall of the sampled peak below the 4× true peak`;
        if (!(truePeak > 0)) {
          ctx.flag({ name: 'peak_capture', severity: 'ok', value: null, threshold, evidence: { declared_hz: f, worst_underestimate: bound }, message: 'not assessed: the signal never leaves zero' });
          return { samples_per_cycle: r, peak_underestimate: bound, true_peak: truePeak, peak_shortfall: null };
        }
        const shortfall = 1 - samplePeak / truePeak;
        // A pulse train's edges are not band-limited: its "true peak" is the ringing of their reconstruction (Gibbs), not a peak the samples missed.
        const pulses = ctx.tacho != null;
        const severity: Severity = pulses ? 'ok' : shortfall > warnAt ? 'warn' : shortfall > noteAt ? 'note' : 'ok';
        const at = r == null ? '' : ` (${r.toFixed(2)} samples per cycle at the declared ${f} Hz: a sine's peak can fall up to ${pct(bound!)} between samples)`;
        const unit = ctx.unit;
        ctx.flag({
          name: 'peak_capture', severity, value: shortfall, threshold,
          evidence: { declared_hz: f, worst_underestimate: bound, sample_peak: samplePeak, true_peak: truePeak },
          message: pulses
            ? `not judged on a tacho channel: the 4× reconstruction of its pulse edges rings ${pct(Math.max(shortfall, 0))} above the largest sample (Gibbs), which no figure of the shaft depends on`
            : severity === 'ok'
            ? `the largest sample is within ${pct(Math.max(shortfall, 0))} of the true peak ${truePeak.toPrecision(4)} ${unit}${at}`
            : `the largest sample, ${samplePeak.toPrecision(4)} ${unit}, reads ${pct(shortfall)} below the true peak ${truePeak.toPrecision(4)} ${unit}${at}: `
              + (severity === 'warn' ? 'peak and crest factor read that much low; use true_peak, or sample faster' : 'peak and crest factor read slightly low; true_peak holds the band-limited figure'),
        });
        return { samples_per_cycle: r, peak_underestimate: bound, true_peak: truePeak, peak_shortfall: shortfall };
      },
    };
  },
};
