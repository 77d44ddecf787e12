// Filtered envelopes: Butterworth filter (causal or zero-phase), then the magnitude of the analytic signal, and the
// envelope's own spectrum, whose peak is the repetition rate bearing diagnostics look for.
import { analyticGains, AnalyticFilter } from './dsp/analytic.js';
import { butterworthSos, edgesOf, slowestPoleRadius, type FilterSpec } from './dsp/butterworth.js';
import { describe } from './dsp/moments.js';
import { MomentsAccumulator, momentsOf } from './fused/moments.js';
import { belowMeasurableFloor } from './measurable-floor.js';
import { Missing, missingOf } from './fused/missing.js';
import { GapShadow, holdLastFinite } from './dsp/gap-shadow.js';
import { FusedPass } from './fused/pass.js';
import { EdgeTrim } from './dsp/trim.js';
import { Welch, type WelchOptions } from './dsp/welch.js';
import { peakBin } from './spectrum.js';
import { lineProminenceDb } from './dsp/line-prominence.js';
import { chanceLineDb } from './dsp/chance-line.js';
import { scratchOf, type StageDefinition } from './stage.js';

export interface EnvelopeOptions { filter: FilterSpec; spectrum: WelchOptions; min_prominence_db: number }

/**
 * How far the envelope spectrum's largest line must stand above the median of the bins around it (dB) for its frequency to
 * be given, at the least: a line of four times the floor's power (our choice). A spectrum averaging few segments needs more,
 * its chance level (chanceLineDb): the largest of noise's bins reaches 12.5 dB over their median from one segment, 1.7 dB from
 * some hundred (measured, band-limited white noise).
 */
export const MIN_PROMINENCE_DB = 6;

/** Transform length and tapered ramp of the envelope's blocks (at least; longer filters get longer blocks). */
export const ENVELOPE_BLOCK = 4096;
export const ENVELOPE_RAMP = 256;

const EMPTY = { filtered_rms: null, env_mean: null, env_rms: null, env_peak: null, env_dominant_frequency: null, env_dominant_prominence_db: null };

export const envelope: StageDefinition<EnvelopeOptions> = {
  group: 'envelope',
  section: 'envelope',
  spectral: false,
  columns: (o) => {
    const f = o.filter;
    const what = `${f.kind} Butterworth order ${f.order}, ${edgesOf(f).join('–')} Hz, ${f.zero_phase ? 'zero-phase' : 'causal'}`;
    return [
      { name: 'filtered_rms', unit: '[unit]', description: `RMS of the filtered signal (${what}).` },
      { name: 'env_mean', unit: '[unit]', description: 'Mean of the envelope (magnitude of the analytic signal of the filtered signal).' },
      { name: 'env_rms', unit: '[unit]', description: 'RMS of the envelope.' },
      { name: 'env_peak', unit: '[unit]', description: 'Largest envelope value.' },
      { name: 'env_dominant_frequency', unit: 'Hz', description: `Frequency of the largest bin above DC of the envelope's Welch PSD, where it stands at least ${o.min_prominence_db} dB above the median of the bins around it (env_dominant_prominence_db), and above the level the largest of noise's bins reaches by chance once in a thousand spectra averaging as many segments; null where no line stands out (noise), or where filtered_rms lies below the measurable floor, 10⁻⁶ of the channel's RMS (rounding, not content).` },
      { name: 'env_dominant_prominence_db', unit: 'dB', description: 'How far the largest bin above DC of the envelope\'s Welch PSD stands above the median of the 50 bins either side of it (its own main lobe, ±2 bins, and DC left out); null where filtered_rms lies below the measurable floor.' },
    ];
  },
  create(ctx, o) {
    let sos;
    try {
      sos = butterworthSos(o.filter, ctx.sampleRate);
    } catch (e) {
      ctx.note(`${ctx.name}: envelope filter not applied: ${(e as Error).message}`);
      return { push() {}, finish: () => ({ ...EMPTY }) };
    }
    // The filtered signal's and the envelope's moments, each in a fused pass of its own.
    const filteredPass = new FusedPass(), envPass = new FusedPass();
    // The channel's own moments, for the measurable floor the filtered band must reach before a line in its envelope is content.
    const channelMoments = momentsOf(ctx);
    const filtered = filteredPass.joinOrMake('moments', () => new MomentsAccumulator());
    const env = envPass.joinOrMake('moments', () => new MomentsAccumulator());
    // Whole gap-free segments only: fewer samples hold less than one period of the slowest modulation it resolves (below).
    const envSpectrum = new Welch(ctx.sampleRate, o.spectrum, false);
    const r = Math.min(slowestPoleRadius(sos), 1 - 1e-9);
    // Figures leave out the ends where the filter and the transform settle: the filter's impulse response down to 1e-3, and at least 2048 samples.
    const edge = Math.max(2048, Math.ceil(Math.log(1e-3) / Math.log(r)));
    // Working buffers lent for the recording (taken back when it is reduced).
    const buffer = scratchOf(ctx);
    // Missing samples in the trimmed envelope (the blanked shadows of gaps, below) are counted in its own pass, so its
    // spectrum takes only gap-free segments, as the channel's does.
    const envMissing = envPass.joinOrMake('missing', () => new Missing());
    const envTrim = new EdgeTrim(edge, (e) => { envPass.push(e); envSpectrum.push(e, envMissing.inChunk); }, buffer);
    const filteredTrim = new EdgeTrim(edge, (y) => filteredPass.push(y), buffer);
    // One pair of transforms a block filters and makes analytic: the kernel dies below 1e-14 within `reach` samples,
    // kept clear of the tapered ramps (sizes chosen by measurement against scipy, DEVELOPERS.md).
    const zeroPhase = o.filter.zero_phase === true;
    const reach = Math.min(1 << 22, Math.ceil(Math.log(1e-14) / Math.log(r)) + 1);
    const context = ENVELOPE_RAMP + reach;
    const size = Math.max(ENVELOPE_BLOCK, 2 ** Math.ceil(Math.log2(4 * context)));
    const gainKey = `${JSON.stringify(o.filter)}@${ctx.sampleRate}`;
    // A gap is fed to the filter held at the last finite value (the transforms need finite samples), and the output within
    // `edge` of it either side, where the filter still answers the gap, is blanked to NaN and so left out like a missing sample.
    const gaps = missingOf(ctx), shadow = new GapShadow(edge);
    let hold = 0, outAt = 0;
    const analytic = new AnalyticFilter(() => analyticGains(size, ctx.sampleRate, sos, zeroPhase), gainKey, { size, context, ramp: ENVELOPE_RAMP, extension: zeroPhase ? 'odd' : 'zero', buffer },
      (y, e) => {
        if (shadow.pending) shadow.blank([y, e], outAt);
        outAt += y.length;
        filteredTrim.push(y); envTrim.push(e);
      });
    // As scipy.signal.sosfiltfilt, zero-phase filtering needs more samples than its odd extension at each end.
    const firstOrder = Math.min(sos.filter((s) => s[2] === 0).length, sos.filter((s) => s[5] === 0).length);
    const padlen = 3 * (2 * sos.length + 1 - firstOrder);
    let seen = 0, filled: Float64Array | null = null;
    return {
      push(x) {
        if (gaps.inChunk === 0) {
          if (x.length > 0) hold = x[x.length - 1];
          analytic.push(x);
        } else {
          if (filled === null || filled.length < x.length) filled = buffer(x.length);
          const f = filled.length === x.length ? filled : filled.subarray(0, x.length);
          hold = holdLastFinite(x, f, hold);
          shadow.add(x, seen);
          analytic.push(f);
        }
        seen += x.length;
      },
      finish() {
        if (zeroPhase && seen <= padlen) {
          ctx.note(`${ctx.name}: too short for zero-phase filtering (needs more than ${padlen} samples); envelope left empty`);
          return { ...EMPTY };
        }
        analytic.finish();
        // The envelope's figures describe its modulation; fewer samples than one segment of its spectrum hold less than one
        // period of the slowest modulation that spectrum resolves (fs / segment), so they are left empty.
        const least = o.spectrum.segment, kept = env.moments().n;
        if (kept < least) {
          ctx.note(`${ctx.name}: ${kept} envelope samples once ${edge} settling samples are left out at each end${gaps.count > 0 ? ` and around each gap of missing samples` : ''}, fewer than one ${least}-sample segment of its spectrum; envelope left empty`);
          return { ...EMPTY };
        }
        const f = describe(filtered.moments()), e = describe(env.moments());
        // A low-pass or band-stop filter keeps content down to DC, and a block's analytic signal is the envelope only of a
        // band-limited signal (demodulation follows a band-pass or high-pass filter, common practice): its envelope is not given.
        if (o.filter.kind === 'lowpass' || o.filter.kind === 'bandstop') {
          ctx.note(`${ctx.name}: an envelope is taken of a band-limited signal, after a band-pass or high-pass filter; a ${o.filter.kind} filter keeps content down to DC, so the envelope figures are left empty and filtered_rms stands alone`);
          return { ...EMPTY, filtered_rms: f.rms };
        }
        const psd = envSpectrum.result();
        // A band below the measurable floor holds rounding, not content: its envelope's lines are rounding's (README, The measurable floor).
        const measurable = !belowMeasurableFloor(f.rms ?? 0, describe(channelMoments.moments()).rms ?? 0);
        // The largest line is a repetition rate only where it stands out of the envelope's own noise: plain noise has a largest bin too.
        const k = measurable && psd && psd.density.length > 2 ? peakBin(psd.density) : -1;
        const prominence = k > 0 ? lineProminenceDb(psd!.density, k) : null;
        return {
          filtered_rms: f.rms, env_mean: e.mean, env_rms: e.rms, env_peak: e.max,
          env_dominant_frequency: prominence != null && prominence >= Math.max(o.min_prominence_db, chanceLineDb(psd!.segments, psd!.density.length - 1, o.spectrum)) ? k * psd!.df : null,
          env_dominant_prominence_db: prominence,
        };
      },
    };
  },
};
