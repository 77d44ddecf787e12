// Resolution: how many converter steps the signal spans, its signal-to-quantisation-noise ratio against the ideal LSB/√12 (IEEE Std 1241), and what the step does to its figures.
import { momentsOf } from '../fused/moments.js';
import { NO_FINITE_SAMPLES, noFiniteSamples, pct, type QualityThresholds, type Severity } from './flag.js';
import { foldGrid, gcd, noTally, type DeclaredGrid, type GridTally } from './float-grid.js';
import { meanError, peakError, quantisationNoise, rmsError } from './quantisation.js';
import type { ChannelContext, StageDefinition } from '../stage.js';

export { quantisationNoise };

/** Samples of each chunk searched for the data's grid, until it is found to be the converter's own. */
const STEP_SEARCH = 4096;

/**
 * The grid the data take, in converter steps: the greatest common divisor of the changes between successive samples of
 * x[0..count), folded into `grid` (0 when none is known yet). Integer codes change by whole steps, so a grid of 1 is the converter's
 * own and a grid of 256 is 8-bit data in a 16-bit file. A change that is no whole number of steps (scaled or float data) gives 1.
 */
export function dataGrid(x: Float64Array, step: number, grid = 0, count = x.length, prev = NaN): number {
  for (let i = 0; i < count && grid !== 1; i++) {
    const r = Math.abs(x[i] - prev) / step, k = Math.round(r);
    prev = x[i];
    if (!(r > 0.5)) continue; // no change, or the first sample or a missing one
    grid = Math.abs(r - k) > 1e-6 * r ? 1 : gcd(k, grid);
  }
  return grid;
}

/**
 * Whether a grid coarser than the converter's is the data's quantisation: only when the data span at least `least` of its
 * steps (three levels). Two levels (a square wave, a sine sampled at fs/4) change by one amount, whatever the converter: the
 * greatest common divisor of one change is that change, and says nothing about the steps between.
 */
export const spansGrid = (spread: number, gridStep: number, least = 2) => Math.round(spread / gridStep) >= least;

export const resolution: StageDefinition<QualityThresholds> = {
  group: 'quality',
  section: null,
  spectral: false,
  columns: () => [
    { name: 'step_size', unit: '[unit]', description: 'Engineering value of one step of the data: the converter step (on floating-point samples, range span / 2^bits where both are declared and the samples lie on its steps), or the common multiple of it by which every sample changes when the data take coarser steps and span at least two of them.' },
    { name: 'resolution_bits', unit: 'bit', description: 'log2 of the steps the signal spans (peak to peak / step).' },
    { name: 'quantisation_snr_db', unit: 'dB', description: '20·log10(std / (step/√12)): signal against ideal quantisation noise.' },
  ],
  create(ctx, q) {
    const shared = momentsOf(ctx);
    const declared = ctx.stepSize;
    // Floating-point samples keep no step of their own: a declared converter's is used once the data are seen to lie on it.
    const floatGrid = declared == null ? ctx.declaredGrid ?? null : null;
    // Codes coarser than the declared converter (8-bit data in a 16- or 24-bit file) quantise as coarsely as they are; a
    // pulse train takes two levels by design, so a tacho channel keeps its declared step.
    const watch = declared != null && !ctx.tacho;
    let grid = 0, tally = noTally(), seen = 0;
    return {
      push(x) {
        if (watch && grid !== 1) grid = dataGrid(x, declared!, grid, Math.min(x.length, STEP_SEARCH));
        else if (floatGrid && tally.off === 0) tally = foldGrid(tally, x, floatGrid, seen, Math.min(x.length, STEP_SEARCH));
        seen += x.length;
      },
      finish() {
        const m = shared.moments();
        const r = q.resolution;
        const threshold = `note where the step can put a figure off by more than ${pct(r.note_error)}, warn ${pct(r.warn_error)}, fail ${pct(r.fail_error)} (peak: half a step of it; RMS: the step's noise q²/12 added); a static reading of ${r.static_quantities.join(', ')} is judged by its mean`;
        const std = m.n ? Math.sqrt(m.m2 / m.n) : 0;
        const varies = m.n > 0 && std > 0;
        // The declared step on floating-point samples only where the data show it (a filtered or resampled export does not).
        const onGrid = floatGrid != null && tally.off === 0 && tally.told > 0;
        if (floatGrid && varies && !onGrid) {
          const why = offGridWhy(ctx, floatGrid, tally);
          ctx.note(`${ctx.name}: ${why.note}`);
          ctx.flag({ name: 'resolution', severity: 'ok', value: null, threshold, evidence: { declared_step_size: floatGrid.step, changes_checked: tally.told, changes_off_grid: tally.off }, message: `not assessed: ${why.message}`, not_assessed: why.short });
          return { step_size: null, resolution_bits: null, quantisation_snr_db: null };
        }
        const base = declared ?? (onGrid ? floatGrid.step : null);
        if (onGrid && !ctx.tacho) grid = tally.grid;
        const coarser = base != null && grid > 1 && spansGrid(m.max - m.min, grid * base);
        const step = coarser ? grid * base! : base;
        if (step == null || !varies) {
          // Without a step (floating-point samples keep none unless bits and range are declared; integer codes always give
          // one) the check cannot be made; a signal that never varies is the flatline flag's.
          ctx.flag(step == null && floatGrid == null
            ? { name: 'resolution', severity: 'ok', value: null, threshold, evidence: {}, message: 'not assessed: converter step unknown (floating-point samples keep none; declare the converter\'s bits and range in archive.yaml to check the steps it gave them)', not_assessed: ctx.bits != null && ctx.range == null ? 'floating-point samples keep no converter step: declare range with bits in archive.yaml' : 'floating-point samples keep no converter step: declare bits and range in archive.yaml to check the one the converter gave them' }
            : { name: 'resolution', severity: 'ok', value: null, threshold, evidence: {}, message: noFiniteSamples(seen, m.n) ? NO_FINITE_SAMPLES : 'not assessed: the signal does not vary (see flatline)' });
          return { step_size: step, resolution_bits: null, quantisation_snr_db: null };
        }
        const bits = Math.log2(Math.max(1, (m.max - m.min) / step));
        const snr = 20 * Math.log10(std / quantisationNoise(step));
        const steps = Math.round((m.max - m.min) / step);
        const peak = Math.max(Math.abs(m.min), Math.abs(m.max));
        const errors = { peak: peakError(step, peak), rms: rmsError(step, std) };
        const worstError = Math.max(errors.peak, errors.rms);
        const dynamic: Severity = worstError > r.fail_error ? 'fail' : worstError > r.warn_error ? 'warn' : worstError > r.note_error ? 'note' : 'ok';
        // A static reading of a quantity read for its level: the figure is the mean, which the step does not put at risk.
        const mean = meanError(step, m.mean);
        const reading = (dynamic === 'warn' || dynamic === 'fail') && r.static_quantities.includes(ctx.quantity)
          && Math.abs(m.mean) >= m.max - m.min && mean <= r.note_error;
        const severity: Severity = reading ? 'note' : dynamic;
        const used = `${steps} steps of ${step.toPrecision(4)} ${ctx.unit} used (${bits.toFixed(1)} bits)`
          + (coarser ? ` (the data change by whole multiples of ${grid} converter steps: coarser than ${ctx.bitsFromFile ? 'the file\'s' : 'the declared'} ${ctx.bits} bits)` : '')
          + `, ${snr.toFixed(1)} dB above ideal quantisation noise`;
        ctx.flag({
          name: 'resolution', severity, value: snr, threshold,
          evidence: {
            step_size: step, declared_step_size: base, data_grid_steps: grid > 1 ? grid : 1, steps_spanned: steps, bits_used: bits,
            peak_error: errors.peak, rms_error: Number.isFinite(errors.rms) ? errors.rms : null, ...(reading ? { mean_error: mean } : {}),
          },
          message: used + (reading ? staticSaid(ctx, m.mean, std, step, mean, dynamic) : dynamicSaid(severity, errors, snr, peak, ctx.unit)),
        });
        return { step_size: step, resolution_bits: bits, quantisation_snr_db: snr };
      },
    };
  },
};

/** What the step does to a varying signal's figures, by severity: the peak's bound and the RMS's excess, from the measured figures. */
function dynamicSaid(severity: Severity, e: { peak: number; rms: number }, snr: number, peak: number, unit: string): string {
  const peakSaid = `a peak can be off by up to ${pct(e.peak)} (half a step of the ${Number(peak.toPrecision(4))} ${unit} peak)`;
  const rmsSaid = Number.isFinite(e.rms) ? `RMS (mean removed) reads about ${pct(e.rms)} high (the step's noise added)` : 'the variation is no more than the step\'s own noise';
  const bands = `band figures more than ${snr.toFixed(0)} dB below the overall level`;
  if (severity === 'ok') return '';
  if (severity === 'note') return `: ${peakSaid}, ${rmsSaid}; ${bands} sit on quantisation noise`;
  if (severity === 'warn') return `: too coarse for the figures: ${peakSaid}, ${rmsSaid}, and ${bands} are quantisation noise; use a smaller range or a finer converter`;
  return `: too coarse: ${peakSaid}, ${rmsSaid}; peak, kurtosis and band figures describe the converter's steps more than the signal; use a smaller range or a finer converter`;
}

/** A static reading of a quantity read for its level: its mean is the figure, and its few steps of variation are noise. */
function staticSaid(ctx: Pick<ChannelContext, 'unit' | 'quantity'>, mean: number, std: number, step: number, error: number, dynamic: Severity): string {
  return `: a static reading: its mean, ${Number(mean.toPrecision(6))} ${ctx.unit}, lies ${Math.round(Math.abs(mean) / step)} steps from zero and is resolved to within half a step (${pct(error)}), closer where noise of half a step or more dithers the converter (common practice); its variation, ${(std / step).toFixed(2)} steps RMS, is the chain's noise at the converter's steps, so std, kurtosis, band and cycle figures describe that noise rather than the ${ctx.quantity}${dynamic === 'fail' ? ' (as dynamic figures they would fail)' : ''}`;
}

/**
 * Why a declared step is not used on floating-point samples: the note for run.json, the flag's message, and the short reason
 * counted on the terminal. `tally.off` changes off the grid, or none that the storage's rounding let tell.
 */
export function offGridWhy(ctx: Pick<ChannelContext, 'bits' | 'range' | 'unit' | 'sampleRate'>, g: DeclaredGrid, tally: GridTally): { note: string; message: string; short: string } {
  const declared = `bits: ${ctx.bits} and range [${ctx.range?.join(', ')}] ${ctx.unit} declare converter steps of ${Number(g.step.toPrecision(4))} ${ctx.unit}`;
  if (tally.off === 0) {
    return {
      note: `${declared}, but the stored values are rounded by a quarter of a step or more (float32 holds 24 significant bits), so the samples cannot show those steps; resolution is not judged. Store the samples as float64, or in the converter's units (±1 of full scale), to have it judged`,
      message: 'the stored values are rounded too coarsely to show the declared converter steps (see the recording\'s notes)',
      short: 'floating-point samples rounded too coarsely to show the declared converter steps',
    };
  }
  return {
    note: `${declared}, but the samples do not lie on them: ${tally.off} of the ${tally.told} changes checked are no whole number of steps (the first, at ${(tally.firstOffAt / ctx.sampleRate).toFixed(3)} s, ${tally.firstOffBy.toFixed(2)} of a step off), as in filtered, resampled or rescaled data or values printed to too few digits; resolution is not judged with a step the data do not show. If the file holds the converter's own samples, check bits, range and scale in archive.yaml`,
    message: 'the samples do not lie on the declared converter steps (see the recording\'s notes)',
    short: 'floating-point samples off the declared converter steps (filtered, resampled or rescaled)',
  };
}
