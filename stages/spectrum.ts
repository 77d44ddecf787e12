// The Welch spectrum of a channel, shared by the spectral stages, and the descriptors read from it: dominant frequency, centroid.
import type { Section } from './dsp/butterworth.js';
import { Decimator, decimatorPower, READ_FRACTION } from './dsp/decimate.js';
import { FEWEST_SAMPLES, Welch, type Psd, type WelchOptions } from './dsp/welch.js';
import { missingOf, type Missing } from './fused/missing.js';
import { momentsOf } from './fused/moments.js';
import { coverageNote, spectrumPower, StreamVariance } from './spectral-coverage.js';
import { scratchOf, type ChannelContext, type Stage, type StageDefinition } from './stage.js';

export const DEFAULT_SPECTRUM: WelchOptions = { segment: 4096, overlap: 0.5, window: 'hann' };

export interface SpectrumProduct extends Stage { psd(): Psd | null }

/**
 * The channel's one Welch accumulator for these options, made on first request. It reads the chunk's missing samples
 * from the channel's fused pass (asked for first, so the pass walks each chunk before it): a clean chunk goes straight in.
 * `noteShort` false: a stage that says itself what a short recording leaves out of its figures gets no note of its own.
 * `decimation` D above 1: the spectrum of the low-passed channel's every D-th sample (`decimatedSpectrum`), for bands
 * that need a fine resolution at low frequencies.
 */
export function spectrumOf(ctx: ChannelContext, o: WelchOptions, noteShort = true, decimation = 1): SpectrumProduct {
  const missing = missingOf(ctx);
  const key = `welch:${o.segment}:${o.overlap}:${o.window}${decimation > 1 ? `:every${decimation}` : ''}${noteShort ? '' : ':own-note'}`;
  if (decimation > 1) return ctx.shared(key, () => decimatedSpectrum(ctx, o, decimation, missing, noteShort));
  const moments = momentsOf(ctx);
  return ctx.shared(key, () => {
    const welch = new Welch(ctx.sampleRate, o);
    let cached: Psd | null | undefined;
    const psd = () => {
      if (cached !== undefined) return cached;
      cached = welch.result();
      const note = spectrumNote(ctx.name, o, ctx.sampleRate, cached, welch.brokenByGaps, noteShort);
      if (note) ctx.note(note);
      // Its power against the channel's exact variance (the fused pass's moments): a level that changed shows here.
      if (cached && !welch.brokenByGaps) {
        const m = moments.moments();
        const what = { name: ctx.name, what: `spectrum (${o.segment}-sample segments)`, figures: SHARED_FIGURES, halfSegment: Math.min(cached.length, o.segment) / 2 / ctx.sampleRate, df: cached.df };
        const level = coverageNote(what, spectrumPower(cached), m.n > 0 ? m.m2 / m.n : null, m.n);
        if (level) ctx.note(level);
      }
      return cached;
    };
    return { push: (x) => welch.push(x, missing.inChunk), finish: () => ({}), psd };
  });
}

/**
 * Welch's spectrum at fs/D of the channel low-passed and cut to every D-th sample (`Decimator`): a segment of 4096 there
 * resolves as finely as one of 4096·D at fs, for a fraction of the transforms. Read up to fs/(6D) (`upTo`); its density is
 * divided by the decimator's |H(f)|² up to fs/(4D), so the filters' droop is taken out where it is read. Missing samples
 * break its stream as they break the shared spectrum's (the settling after a gap as well).
 */
function decimatedSpectrum(ctx: ChannelContext, o: WelchOptions, factor: number, missing: Missing, noteShort: boolean): SpectrumProduct {
  const decimator = new Decimator(ctx.sampleRate, factor, scratchOf(ctx)), rate = decimator.rate;
  const welch = new Welch(rate, o), stream = new StreamVariance();
  let out: Float64Array | null = null;
  let cached: Psd | null | undefined;
  const psd = () => {
    if (cached !== undefined) return cached;
    const p = welch.result();
    // Its power (before the droop is taken out) against the exact variance of the samples it was taken from.
    if (p && !welch.brokenByGaps) {
      const what = { name: ctx.name, what: `finer spectrum of every ${factor}th sample (${o.segment}-sample segments spanning ${Number((o.segment / rate).toPrecision(3))} s)`, figures: FINER_FIGURES, halfSegment: Math.min(p.length, o.segment) / 2 / rate, df: p.df };
      const level = coverageNote(what, spectrumPower(p), stream.variance(), stream.count);
      if (level) ctx.note(level);
    }
    cached = p && { ...p, density: withoutDroop(p, ctx.sampleRate, factor, decimator.last), upTo: READ_FRACTION * rate, ...(p.covered !== undefined ? { covered: p.covered * factor } : {}) };
    const note = spectrumNote(ctx.name, o, rate, cached, welch.brokenByGaps, noteShort, `spectrum of every ${factor}th sample (low-passed, ${Number(rate.toPrecision(6))} Hz)`);
    if (note) ctx.note(note);
    return cached;
  };
  return {
    push(x) {
      const need = decimator.outputsAtMost(x.length);
      if (!out || out.length < need) out = scratchOf(ctx)(Math.max(need, 2 * (out?.length ?? 0)));
      const { length, missing: nan } = decimator.push(x, out, missing.inChunk);
      if (length > 0) welch.push(out.subarray(0, length), nan);
      if (nan === 0) stream.add(out, length);
    },
    finish: () => ({}),
    psd,
  };
}

// The density divided by the decimator's |H(f)|² (stages/dsp/decimate.ts) up to a quarter of its rate, where it is read.
function withoutDroop(p: Psd, fs: number, factor: number, last: Section[]): Float64Array {
  const density = p.density.slice(), top = Math.min(density.length - 1, Math.floor(fs / factor / 4 / p.df));
  for (let k = 0; k <= top; k++) density[k] /= decimatorPower(k * p.df, fs, factor, last);
  return density;
}

// The figures each spectrum's note names (the stages that may read it; spectra.parquet keeps the shared one as well).
const SHARED_FIGURES = 'the band, octave-band, velocity and order figures, dominant_frequency, spectral_centroid and the kept spectrum read from it';
const FINER_FIGURES = 'the low octave bands, the low part of the velocity bands and slow shafts\' orders read from it';

/** What the spectrum was taken from, when it is other than whole segments of a gap-free recording. */
function spectrumNote(name: string, o: WelchOptions, fs: number, psd: Psd | null, gaps: boolean, noteShort: boolean, what = 'spectrum'): string {
  const padded = (p: Psd) => `zero-padded to ${o.segment} points (bins every ${(p.df).toPrecision(4)} Hz, resolution ${(fs / p.length).toPrecision(4)} Hz)`;
  if (gaps) {
    if (!psd) return `${name}: no stretch of ${FEWEST_SAMPLES} samples free of missing samples; spectral figures left empty (null)`;
    if (psd.from !== undefined) return `${name}: no stretch of ${o.segment} samples free of missing samples; ${what} from the longest gap-free stretch, ${psd.length} samples from ${seconds(psd.from / fs)} to ${seconds((psd.from + psd.length) / fs)}, as one periodogram ${padded(psd)}`;
    return `${name}: ${what} from the ${psd.segments} segments of ${o.segment} samples free of missing samples (missing samples break the stream; no segment holds one)`;
  }
  if (!psd) return `${name}: fewer than ${FEWEST_SAMPLES} samples; spectral figures left empty (null)`;
  if (psd.length < o.segment && noteShort) return `${name}: shorter (${psd.length} samples) than one ${o.segment}-sample spectrum segment: one periodogram of the whole recording, ${padded(psd)}`;
  return '';
}

/** Seconds for a note: six significant digits at most. */
const seconds = (s: number) => `${Number(s.toPrecision(6))} s`;

/** Index of the largest density above DC. */
export function peakBin(density: Float64Array): number {
  let k = 1;
  for (let i = 2; i < density.length; i++) if (density[i] > density[k]) k = i;
  return k;
}

/**
 * Power-weighted mean frequency above DC, Σ f·P / Σ P (null for a spectrum without power). Its own function rather
 * than a loop in each channel's stage, so that V8 optimises one loop once instead of interpreting it channel by channel.
 */
export function spectralCentroid(density: Float64Array, df: number): number | null {
  let num = 0, den = 0;
  for (let k = 1; k < density.length; k++) { num += k * df * density[k]; den += density[k]; }
  return den > 0 ? num / den : null;
}

export const spectrum: StageDefinition<WelchOptions> = {
  group: 'spectrum',
  section: 'spectrum',
  spectral: true,
  columns: () => [
    { name: 'dominant_frequency', unit: 'Hz', description: 'Frequency of the largest Welch PSD bin above DC (resolution fs/segment).' },
    { name: 'spectral_centroid', unit: 'Hz', description: 'Power-weighted mean frequency of the Welch PSD above DC: Σ f·P / Σ P.' },
  ],
  create(ctx, o) {
    const s = spectrumOf(ctx, o);
    return {
      push() {},
      finish() {
        const psd = s.psd();
        if (!psd || psd.density.length < 3) return { dominant_frequency: null, spectral_centroid: null };
        // A spectrum without power above DC (a constant channel) has no dominant frequency, as it has no centroid.
        const centroid = spectralCentroid(psd.density, psd.df);
        return { dominant_frequency: centroid === null ? null : peakBin(psd.density) * psd.df, spectral_centroid: centroid };
      },
    };
  },
};
