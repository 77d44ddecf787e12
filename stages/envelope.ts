// Filtered envelopes: Butterworth filter (causal or zero-phase), then the magnitude of the analytic signal, and the
// envelope's own spectrum, whose peak is the repetition rate bearing diagnostics look for.
import { butterworthSos, edgesOf, type FilterSpec } from './dsp/butterworth.js';
import { ZeroPhaseFilter } from './dsp/filtfilt.js';
import { StreamingEnvelope } from './dsp/hilbert.js';
import { chunkMoments, combineMoments, describe, emptyMoments } from './dsp/moments.js';
import { SosFilter } from './dsp/sosfilt.js';
import { EdgeTrim } from './dsp/trim.js';
import { Welch, type WelchOptions } from './dsp/welch.js';
import { slowestPoleRadius } from './dsp/butterworth.js';
import { peakBin } from './spectrum.js';
import type { StageDefinition } from './stage.js';

export interface EnvelopeOptions { filter: FilterSpec; spectrum: WelchOptions }

const EMPTY = { filtered_rms: null, env_mean: null, env_rms: null, env_peak: null, env_dominant_frequency: null };

export const envelope: StageDefinition<EnvelopeOptions> = {
  group: 'envelope',
  columns: (o) => {
    const f = o.filter;
    const what = `${f.kind} Butterworth order ${f.order}, ${edgesOf(f).join('–')} Hz, ${f.zero_phase ? 'zero-phase' : 'causal'}`;
    return [
      { name: 'filtered_rms', unit: '[unit]', description: `RMS of the filtered signal (${what}).` },
      { name: 'env_mean', unit: '[unit]', description: 'Mean of the envelope (magnitude of the analytic signal of the filtered signal).' },
      { name: 'env_rms', unit: '[unit]', description: 'RMS of the envelope.' },
      { name: 'env_peak', unit: '[unit]', description: 'Largest envelope value.' },
      { name: 'env_dominant_frequency', unit: 'Hz', description: 'Frequency of the largest bin above DC of the envelope\'s Welch PSD.' },
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
    let filtered = emptyMoments(), env = emptyMoments();
    const envSpectrum = new Welch(ctx.sampleRate, o.spectrum);
    // Figures leave out the ends where the filter and the transform settle: the filter's impulse response down to 1e-3, and at least 2048 samples.
    const edge = Math.max(2048, Math.ceil(Math.log(1e-3) / Math.log(Math.min(slowestPoleRadius(sos), 1 - 1e-9))));
    const envTrim = new EdgeTrim(edge, (e) => { env = combineMoments(env, chunkMoments(e)); envSpectrum.push(e); });
    const filteredTrim = new EdgeTrim(edge, (y) => { filtered = combineMoments(filtered, chunkMoments(y)); });
    const hilbert = new StreamingEnvelope((e) => envTrim.push(e));
    const onFiltered = (y: Float64Array) => { filteredTrim.push(y); hilbert.push(y); };
    const zero = o.filter.zero_phase ? new ZeroPhaseFilter(sos, onFiltered) : null;
    const causal = zero ? null : new SosFilter(sos);
    let scratch = new Float64Array(0);
    return {
      push(x) {
        if (zero) { zero.push(x); return; }
        if (scratch.length < x.length) scratch = new Float64Array(x.length);
        const y = scratch.subarray(0, x.length);
        causal!.process(x, y);
        onFiltered(y);
      },
      finish() {
        if (zero && !zero.finish()) {
          ctx.note(`${ctx.name}: too short for zero-phase filtering (needs more than ${zero.padlen} samples); envelope left empty`);
          return { ...EMPTY };
        }
        hilbert.finish();
        if (env.n === 0) {
          ctx.note(`${ctx.name}: too short for the envelope once ${edge} settling samples are left out at each end; envelope left empty`);
          return { ...EMPTY };
        }
        const f = describe(filtered), e = describe(env);
        const psd = envSpectrum.result();
        return {
          filtered_rms: f.rms, env_mean: e.mean, env_rms: e.rms, env_peak: e.max,
          env_dominant_frequency: psd && psd.density.length > 2 ? peakBin(psd.density) * psd.df : null,
        };
      },
    };
  },
};
