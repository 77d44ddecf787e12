// Peak capture: how far the largest sample falls short of the true, band-limited peak, estimated by 4× oversampling
// (ITU-R BS.1770-4 Annex 2); beside it the worst case for a sine at the declared highest frequency, 1 − cos(π·f/fs) (derived).
import { simdPeakScan } from '../dsp/fft-simd.js';
import { guardFor, TAP_PAIRS, TruePeak } from '../dsp/true-peak.js';
import { missingOf } from '../fused/missing.js';
import { peakRepeatsOf } from '../fused/peak-repeats.js';
import type { StageDefinition } from '../stage.js';
import { pct, type QualityThresholds, type Severity } from './flag.js';
import { FEWEST_REPEATS, FLATTENED_MARGIN, flattening, nearBelow, type Flattening } from './flattening.js';
import { histogramOf } from '../fused/histogram.js';
import { BINS } from './evidence.js';
import { scratchOf } from '../stage.js';
import { saturationLimits } from './saturation.js';

/** Worst-case shortfall of the largest sample below a sine's peak at r samples per cycle: the peak falls midway between two samples. */
export const peakUnderestimate = (samplesPerCycle: number) => 1 - Math.cos(Math.PI / samplesPerCycle);

export const peakCapture: StageDefinition<QualityThresholds> = {
  group: 'quality',
  section: null,
  spectral: false,
  columns: () => [
    { name: 'samples_per_cycle', unit: '1', description: 'Sample rate / declared highest frequency.' },
    { name: 'peak_underestimate', unit: '1', description: 'Worst-case shortfall of a sampled peak at the declared highest frequency: 1 − cos(π·f/fs).' },
    { name: 'true_peak', unit: '[unit]', description: 'Largest magnitude of the band-limited signal between the samples, by 4× oversampling (ITU-R BS.1770-4 Annex 2); null where the waveform was flattened near its limit (peak_capture says so).' },
    { name: 'peak_shortfall', unit: '1', description: 'How far the largest sample falls below the true peak: 1 − peak / true_peak.' },
  ],
  create(ctx, q) {
    const fs = ctx.sampleRate, f = ctx.maxFrequencyHz;
    // Candidates for interpolation come within cos(π·f/fs) of the running true peak (see TruePeak); f is at most fs/2.
    const guard = guardFor(fs, f);
    const tracker = new TruePeak(guard, simdPeakScan(TAP_PAIRS));
    const limits = saturationLimits(ctx.range, ctx.fullScale);
    // Without limits, a flat top shows in the largest sample's repeats, counted in the fused pass (only then: it costs a compare a sample).
    const repeats = limits ? null : peakRepeatsOf(ctx);
    // And the values near that top, from the sample of the channel the evidence stage keeps anyway (the same accumulator).
    const kept = limits ? null : histogramOf(ctx, null, BINS);
    // Limits not centred on zero (a range [0, 16] bar): each end is held to its own, by a second tracker of the samples
    // measured from their middle; only such channels pay for it.
    const middle = limits ? (limits[0] + limits[1]) / 2 : 0, half = limits ? (limits[1] - limits[0]) / 2 : 0;
    const centredTracker = limits && Math.abs(middle) > 0.01 * half ? new TruePeak(guard, simdPeakScan(TAP_PAIRS)) : null;
    // The dropout flag's count (made there anyway): a channel with no finite sample has no peak to judge.
    const missing = missingOf(ctx);
    const scratch = scratchOf(ctx);
    let shifted: Float64Array | null = null;
    let n = 0;
    return {
      push(x) {
        tracker.push(x);
        if (centredTracker) {
          if (!shifted || shifted.length < x.length) shifted = scratch(x.length);
          const y = shifted.length === x.length ? shifted : shifted.subarray(0, x.length);
          subtractFrom(x, middle, y);
          centredTracker.push(y);
        }
        n += x.length;
      },
      finish() {
        const { note_shortfall: noteAt, warn_shortfall: warnAt } = q.peak_capture;
        const r = f ? fs / f : null;
        const bound = r == null ? null : r > 1 ? peakUnderestimate(r) : 1;
        const { samplePeak, truePeak } = tracker.result();
        const threshold = `note above ${pct(noteAt)}, warn above ${pct(warnAt)} shortfall of the sampled peak below the 4× true peak; warn: the 4× peak beyond the limit by more than ${pct(FLATTENED_MARGIN)} (flattened)`;
        if (n > 0 && missing.count === n) {
          ctx.flag({ name: 'peak_capture', severity: 'ok', value: null, threshold, evidence: { declared_hz: f, worst_underestimate: bound }, message: 'not assessed: the channel has no finite samples (the dropout flag fails it)' });
          return { samples_per_cycle: r, peak_underestimate: bound, true_peak: null, peak_shortfall: null };
        }
        if (!(truePeak > 0)) {
          ctx.flag({ name: 'peak_capture', severity: 'ok', value: null, threshold, evidence: { declared_hz: f, worst_underestimate: bound }, message: 'not assessed: the signal never leaves zero' });
          return { samples_per_cycle: r, peak_underestimate: bound, true_peak: truePeak, peak_shortfall: null };
        }
        const shortfall = 1 - samplePeak / truePeak;
        // A pulse train's edges are not band-limited: its "true peak" is the ringing of their reconstruction (Gibbs), not a peak the samples missed.
        const pulses = ctx.tacho != null;
        const near = repeats && kept && repeats.count >= FEWEST_REPEATS ? nearBelow(kept.sample, repeats.top) : 0;
        const centred = centredTracker ? centredTracker.result().truePeak : null;
        const flat = pulses ? null : flattening(samplePeak, truePeak, limits, repeats && { count: repeats.count, samples: n, near }, undefined, undefined, undefined, centred);
        if (flat) {
          ctx.flag({ name: 'peak_capture', severity: 'warn', value: null, threshold, evidence: flattenedEvidence(flat, f, bound), message: flattenedMessage(flat, ctx.unit, ctx.range != null) });
          return { samples_per_cycle: r, peak_underestimate: bound, true_peak: null, peak_shortfall: null };
        }
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

// One pass over a chunk: the samples measured from a point (missing ones stay missing).
function subtractFrom(x: Float64Array, point: number, out: Float64Array): void {
  for (let i = 0; i < x.length; i++) out[i] = x[i] - point;
}

const figure = (v: number) => Number(v.toPrecision(4));

function flattenedEvidence(flat: Flattening, declaredHz: number | null, bound: number | null) {
  return {
    declared_hz: declaredHz, worst_underestimate: bound, sample_peak: flat.samplePeak, interpolated_peak: flat.interpolatedPeak, limit: flat.limit, largest_sample_repeats: flat.repeats,
    ...(flat.centredOn != null ? { range_middle: flat.centredOn, interpolated_excursion: flat.excursion ?? null } : {}),
  };
}

/** What a flattened waveform's flag says: the evidence, and that neither peak figure measures the input. */
function flattenedMessage(flat: Flattening, unit: string, declared: boolean): string {
  const tail = 'so neither the largest sample nor the interpolated peak is the input\'s peak, and true_peak is left empty (an interpolation assumes an undistorted signal): '
    + 'check the channel for clipping or compression (the sensor\'s range, the amplifier\'s gain and supply) rather than sampling faster';
  if (flat.centredOn != null) {
    const lo = flat.centredOn - flat.limit!, hi = flat.centredOn + flat.limit!;
    return `the waveform was flattened near an end of its limits (clipped, or compressed before the converter): measured from their middle, ${figure(flat.centredOn)} ${unit}, its 4× interpolated excursion, ${figure(flat.excursion!)} ${unit}, lies ${pct(flat.excursion! / flat.limit! - 1)} beyond the half-span, ${figure(flat.limit!)} ${unit}, of the ${declared ? 'instrument range' : 'converter\'s full scale'} ${figure(lo)} to ${figure(hi)} ${unit}, `
      + `which a waveform that kept within it does not reach; ${tail}`;
  }
  if (flat.flatTop) {
    return `the waveform looks flattened at its largest value: ${flat.repeats} samples (${pct(flat.repeats! / flat.samples!)}) sit at ±${figure(flat.samplePeak)} ${unit}, reached smoothly through values just below it, a flat top rather than a tone's crests or a coarse grid's top step; `
      + `no range or bits are declared, so whether that value is the instrument's limit is not known (declare range in archive.yaml); ${tail}`;
  }
  if (flat.limit != null) {
    const where = declared ? 'instrument range' : 'converter\'s full scale';
    return `the waveform was flattened near its limit (clipped, or compressed before the converter): its 4× interpolated peak, ${figure(flat.interpolatedPeak)} ${unit}, lies ${pct(flat.interpolatedPeak / flat.limit - 1)} beyond the ${where}, ±${figure(flat.limit)} ${unit}, `
      + `which a waveform that kept within it does not reach; the largest sample is ${figure(flat.samplePeak)} ${unit}; ${tail}`;
  }
  return `the waveform looks flattened at its largest value: ${flat.repeats} samples sit at ±${figure(flat.samplePeak)} ${unit}, and its 4× interpolated peak, ${figure(flat.interpolatedPeak)} ${unit}, lies ${pct(flat.interpolatedPeak / flat.samplePeak - 1)} above them, `
    + `as a flat top's edges ring when interpolated; no range or bits are declared, so whether that value is the instrument's limit is not known (declare range in archive.yaml); ${tail}`;
}
