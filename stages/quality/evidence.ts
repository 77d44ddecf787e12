// The pictures' data for the quality report: amplitude histogram, spectrum and RMS trend, kept small whatever the recording length.
import { FEWEST_SAMPLES, type WelchOptions } from '../dsp/welch.js';
import { spectrumOf } from '../spectrum.js';
import { packFloats, unpackFloats, type PackedFloats } from '../spectra.js';
import type { StageDefinition } from '../stage.js';
import { fixedWindowsOf } from '../fused/fixed-windows.js';
import { histogramOf } from '../fused/histogram.js';
import { momentsOf } from '../fused/moments.js';

export interface Evidence {
  histogram: { edges: number[]; counts: number[]; range: [number, number] | null; fullScale: [number, number] | null };
  spectrum: { df: number; density: number[]; nyquist: number; maxFrequencyHz: number | null } | null;
  /** Why there is no spectrum, said in the picture's place (absent from entries stored before it was kept). */
  noSpectrum?: string;
  /** RMS of each window at its place in time; NaN for a window without a finite sample. */
  trend: { window_s: number; rms: number[] };
}

/** The pictures' data as stored with a recording's result: the long lists as float32 (ample for a picture). */
export interface PackedEvidence {
  histogram: { edges: PackedFloats; counts: PackedFloats; range: [number, number] | null; fullScale: [number, number] | null };
  spectrum: { df: number; density: PackedFloats; nyquist: number; maxFrequencyHz: number | null } | null;
  noSpectrum?: string;
  trend: { window_s: number; rms: PackedFloats };
}

export const packEvidence = (e: Evidence): PackedEvidence => ({
  ...(e.noSpectrum ? { noSpectrum: e.noSpectrum } : {}),
  histogram: { ...e.histogram, edges: packFloats(e.histogram.edges), counts: packFloats(e.histogram.counts) },
  spectrum: e.spectrum && { ...e.spectrum, density: packFloats(e.spectrum.density) },
  trend: { ...e.trend, rms: packFloats(e.trend.rms) },
});

const listOf = (packed: PackedFloats) => Array.from(unpackFloats(packed));
export const unpackEvidence = (p: PackedEvidence): Evidence => ({
  ...(p.noSpectrum ? { noSpectrum: p.noSpectrum } : {}),
  histogram: { ...p.histogram, edges: listOf(p.histogram.edges), counts: listOf(p.histogram.counts) },
  spectrum: p.spectrum && { ...p.spectrum, density: listOf(p.spectrum.density) },
  trend: { ...p.trend, rms: listOf(p.trend.rms) },
});

export const BINS = 120;
/** The report's RMS trend: windows of 0.1 s from the fused pass, on every channel (the noise_floor flag joins them into its windows). */
export const TREND_WINDOW_S = 0.1;
const MAX_POINTS = 600;

/** The largest finite value, NaN when there is none: a group of windows that all lack samples stays a gap. */
function finiteMax(xs: number[]): number {
  let m = NaN;
  for (const x of xs) if (x - x === 0 && !(x <= m)) m = x;
  return m;
}

/** Why a channel has no spectrum to picture: a constant signal, or no stretch free of missing samples long enough for one. */
export function noSpectrumWhy(hasPsd: boolean, missing: boolean, min: number, max: number): string | null {
  if (hasPsd && min === max) return `No spectrum: the signal is constant (every sample ${Number(min.toPrecision(6))}), and a constant signal has no spectrum.`;
  if (hasPsd) return null;
  if (!(min <= max)) return 'No spectrum: the channel holds no finite sample.';
  return missing
    ? `No spectrum: no stretch of ${FEWEST_SAMPLES} samples free of missing samples, the fewest a spectrum is taken from.`
    : `No spectrum: fewer than ${FEWEST_SAMPLES} samples.`;
}

/** Groups consecutive values into at most `max` points with `pick` (mean for densities, max for RMS). */
function reduceTo(values: ArrayLike<number>, max: number, pick: (xs: number[]) => number): { values: number[]; factor: number } {
  const factor = Math.max(1, Math.ceil(values.length / max));
  const out: number[] = [];
  for (let i = 0; i < values.length; i += factor) out.push(pick(Array.from({ length: Math.min(factor, values.length - i) }, (_, j) => values[i + j])));
  return { values: out, factor };
}

export const evidence: StageDefinition<{ spectrum: WelchOptions }> = {
  group: 'quality',
  section: null,
  spectral: false,
  columns: () => [],
  create(ctx, o) {
    const s = spectrumOf(ctx, o.spectrum);
    const limits = ctx.range ?? ctx.fullScale;
    // With known limits the histogram spans them plus 10 % each side, so clipping shows as spikes at the edges.
    let lo = limits ? limits[0] - 0.1 * (limits[1] - limits[0]) : Infinity;
    let hi = limits ? limits[1] + 0.1 * (limits[1] - limits[0]) : -Infinity;
    // The histogram (or, without limits, a reservoir sample) and the RMS trend come from the channel's fused pass.
    const histogram = histogramOf(ctx, limits ? [lo, hi] : null, BINS);
    const counts = histogram.counts;
    const win = Math.max(1, Math.round(TREND_WINDOW_S * ctx.sampleRate));
    const trend: number[] = [];
    // Windows keep their place in time (as in windows.parquet): one without a finite sample is a gap, not skipped.
    fixedWindowsOf(ctx, win).listen((_, wsq, _peak, _end, finite) => { trend.push(finite > 0 ? Math.sqrt(wsq / finite) : NaN); });
    const moments = momentsOf(ctx);
    return {
      push() {},
      finish() {
        ctx.evidence('histogram', () => {
          const reservoir = histogram.sample;
          if (!limits && reservoir.length) {
            lo = Math.min(...reservoir); hi = Math.max(...reservoir);
            if (hi === lo) { lo -= 0.5; hi += 0.5; }
            for (const v of reservoir) counts[Math.min(BINS - 1, Math.floor(((v - lo) / (hi - lo)) * BINS))]++;
          }
          return { edges: Array.from({ length: BINS + 1 }, (_, i) => lo + ((hi - lo) * i) / BINS), counts: Array.from(counts), range: ctx.range, fullScale: ctx.fullScale };
        });
        ctx.evidence('noSpectrum', () => {
          const psd = s.psd(), m = moments.moments();
          return noSpectrumWhy(psd != null, m.nonFinite > 0, m.min, m.max) ?? undefined;
        });
        ctx.evidence('spectrum', () => {
          const psd = s.psd(), m = moments.moments();
          if (!psd || m.min === m.max) return null;
          const r = reduceTo(psd.density, 512, (xs) => xs.reduce((a, b) => a + b, 0) / xs.length);
          return { df: psd.df * r.factor, density: r.values, nyquist: ctx.sampleRate / 2, maxFrequencyHz: ctx.maxFrequencyHz };
        });
        ctx.evidence('trend', () => {
          const r = reduceTo(trend, MAX_POINTS, finiteMax);
          return { window_s: (win / ctx.sampleRate) * r.factor, rms: r.values };
        });
        return {};
      },
    };
  },
};
