// Resolution: how many converter steps the signal spans, and its signal-to-quantisation-noise ratio against the ideal LSB/√12 (IEEE Std 1241).
import { momentsOf } from '../fused/moments.js';
import type { StageDefinition } from '../stage.js';
import { pct, type QualityThresholds, type Severity } from './flag.js';

/** Ideal quantisation noise RMS of a step q: q/√12 (IEEE Std 1241, uniform error over one step). */
export const quantisationNoise = (step: number) => step / Math.sqrt(12);

/** Samples of each chunk searched for the smallest change: enough to meet a one-step change in any signal that uses every code. */
const STEP_SEARCH = 4096;

/** The smallest non-zero change between successive samples of x[0..count): a multiple of the step the data actually take. */
export function smallestChange(x: Float64Array, count = x.length, prev = NaN): number {
  let least = Infinity;
  for (let i = 0; i < count; i++) { const d = Math.abs(x[i] - prev); if (d > 0 && d < least) least = d; prev = x[i]; }
  return least;
}

export const resolution: StageDefinition<QualityThresholds> = {
  group: 'quality',
  columns: () => [
    { name: 'step_size', unit: '[unit]', description: 'Engineering value of one step of the data: the converter step, or the smallest change between samples when the data take coarser steps.' },
    { name: 'resolution_bits', unit: 'bit', description: 'log2 of the steps the signal spans (peak to peak / step).' },
    { name: 'quantisation_snr_db', unit: 'dB', description: '20·log10(std / (step/√12)): signal against ideal quantisation noise.' },
  ],
  create(ctx, q) {
    const shared = momentsOf(ctx);
    // Codes coarser than the declared converter (8-bit data in a 16- or 24-bit file) quantise as coarsely as they are; a
    // pulse train takes two levels by design, so a tacho channel keeps its declared step.
    const watch = ctx.stepSize != null && !ctx.tacho;
    let least = Infinity;
    return {
      push(x) { if (watch && x.length) least = Math.min(least, smallestChange(x, Math.min(x.length, STEP_SEARCH))); },
      finish() {
        const m = shared.moments();
        const declared = ctx.stepSize;
        // Half a step more than declared is already a coarser grid (integer codes differ by whole steps).
        const coarser = declared != null && Number.isFinite(least) && least > 1.5 * declared;
        const step = coarser ? least : declared;
        const threshold = `note below ${q.resolution.note_snr_db} dB, warn below ${q.resolution.warn_snr_db} dB, fail below ${q.resolution.fail_snr_db} dB`;
        const std = m.n ? Math.sqrt(m.m2 / m.n) : 0;
        if (step == null || m.n === 0 || std === 0) {
          ctx.flag({ name: 'resolution', severity: 'ok', value: null, threshold, evidence: {}, message: step == null ? 'not assessed: converter step unknown (declare bits for the channel)' : 'not assessed: the signal does not vary (see flatline)' });
          return { step_size: step, resolution_bits: null, quantisation_snr_db: null };
        }
        const bits = Math.log2(Math.max(1, (m.max - m.min) / step));
        const snr = 20 * Math.log10(std / quantisationNoise(step));
        const severity: Severity = snr < q.resolution.fail_snr_db ? 'fail' : snr < q.resolution.warn_snr_db ? 'warn' : snr < q.resolution.note_snr_db ? 'note' : 'ok';
        // Half a step at a sine's peak (√2·std), relative to that peak (derived from LSB/√12).
        const peakError = step / 2 / (Math.SQRT2 * std);
        ctx.flag({
          name: 'resolution', severity, value: snr, threshold,
          evidence: { step_size: step, declared_step_size: declared, steps_spanned: Math.round((m.max - m.min) / step), bits_used: bits },
          message: `${Math.round((m.max - m.min) / step)} steps of ${step.toPrecision(4)} ${ctx.unit} used (${bits.toFixed(1)} bits)`
            + (coarser ? ` (the data change by ${Math.round(step / declared!)} converter steps at least: coarser than the declared ${ctx.bits} bits)` : '')
            + `, ${snr.toFixed(1)} dB above ideal quantisation noise`
            + ({ ok: '', note: `: a peak can be off by ${pct(peakError)} (half a step), and band figures more than ${snr.toFixed(0)} dB below the overall level sit on quantisation noise`,
              warn: `: too coarse for the figures: a peak can be off by ${pct(peakError)}, and band figures more than ${snr.toFixed(0)} dB below the overall level are quantisation noise; use a smaller range or a finer converter`,
              fail: `: too coarse: peak, kurtosis and band figures describe the converter's steps more than the signal; use a smaller range or a finer converter` })[severity],
        });
        return { step_size: step, resolution_bits: bits, quantisation_snr_db: snr };
      },
    };
  },
};
