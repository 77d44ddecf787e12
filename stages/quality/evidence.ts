// The pictures' data for the quality report: amplitude histogram, spectrum and RMS trend, kept small whatever the recording length.
import type { WelchOptions } from '../dsp/welch.js';
import { spectrumOf } from '../spectrum.js';
import { packFloats, unpackFloats, type PackedFloats } from '../spectra.js';
import type { StageDefinition } from '../stage.js';
import { finiteWindowsOf } from '../fused/finite-windows.js';
import { histogramOf } from '../fused/histogram.js';

export interface Evidence {
  histogram: { edges: number[]; counts: number[]; range: [number, number] | null; fullScale: [number, number] | null };
  spectrum: { df: number; density: number[]; nyquist: number; maxFrequencyHz: number | null } | null;
  trend: { window_s: number; rms: number[] };
}

/** The pictures' data as stored with a recording's result: the long lists as float32 (ample for a picture). */
export interface PackedEvidence {
  histogram: { edges: PackedFloats; counts: PackedFloats; range: [number, number] | null; fullScale: [number, number] | null };
  spectrum: { df: number; density: PackedFloats; nyquist: number; maxFrequencyHz: number | null } | null;
  trend: { window_s: number; rms: PackedFloats };
}

export const packEvidence = (e: Evidence): PackedEvidence => ({
  histogram: { ...e.histogram, edges: packFloats(e.histogram.edges), counts: packFloats(e.histogram.counts) },
  spectrum: e.spectrum && { ...e.spectrum, density: packFloats(e.spectrum.density) },
  trend: { ...e.trend, rms: packFloats(e.trend.rms) },
});

const listOf = (packed: PackedFloats) => Array.from(unpackFloats(packed));
export const unpackEvidence = (p: PackedEvidence): Evidence => ({
  histogram: { ...p.histogram, edges: listOf(p.histogram.edges), counts: listOf(p.histogram.counts) },
  spectrum: p.spectrum && { ...p.spectrum, density: listOf(p.spectrum.density) },
  trend: { ...p.trend, rms: listOf(p.trend.rms) },
});

const BINS = 120;
const TREND_WINDOW_S = 0.1;
const MAX_POINTS = 600;

/** Groups consecutive values into at most `max` points with `pick` (mean for densities, max for RMS). */
function reduceTo(values: ArrayLike<number>, max: number, pick: (xs: number[]) => number): { values: number[]; factor: number } {
  const factor = Math.max(1, Math.ceil(values.length / max));
  const out: number[] = [];
  for (let i = 0; i < values.length; i += factor) out.push(pick(Array.from({ length: Math.min(factor, values.length - i) }, (_, j) => values[i + j])));
  return { values: out, factor };
}

export const evidence: StageDefinition<{ spectrum: WelchOptions }> = {
  group: 'quality',
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
    finiteWindowsOf(ctx, win).listen((_, wsq, wn) => { trend.push(Math.sqrt(wsq / wn)); });
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
        ctx.evidence('spectrum', () => {
          const psd = s.psd();
          if (!psd) return null;
          const r = reduceTo(psd.density, 512, (xs) => xs.reduce((a, b) => a + b, 0) / xs.length);
          return { df: psd.df * r.factor, density: r.values, nyquist: ctx.sampleRate / 2, maxFrequencyHz: ctx.maxFrequencyHz };
        });
        ctx.evidence('trend', () => {
          const r = reduceTo(trend, MAX_POINTS, (xs) => Math.max(...xs));
          return { window_s: (win / ctx.sampleRate) * r.factor, rms: r.values };
        });
        return {};
      },
    };
  },
};
