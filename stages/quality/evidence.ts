// The pictures' data for the quality report: amplitude histogram, spectrum and RMS trend, kept small whatever the recording length.
import type { WelchOptions } from '../dsp/welch.js';
import { spectrumOf } from '../spectrum.js';
import type { StageDefinition } from '../stage.js';

export interface Evidence {
  histogram: { edges: number[]; counts: number[]; range: [number, number] | null; fullScale: [number, number] | null };
  spectrum: { df: number; density: number[]; nyquist: number; maxFrequencyHz: number | null } | null;
  trend: { window_s: number; rms: number[] };
}

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
    const counts = new Float64Array(BINS);
    const reservoir: number[] = [];
    let seen = 0, seed = 0x9e3779b9;
    const win = Math.max(1, Math.round(TREND_WINDOW_S * ctx.sampleRate));
    let wsq = 0, wn = 0;
    const trend: number[] = [];
    return {
      push(x) {
        for (let i = 0; i < x.length; i++) {
          const v = x[i];
          if (!Number.isFinite(v)) continue;
          if (limits) counts[Math.min(BINS - 1, Math.max(0, Math.floor(((v - lo) / (hi - lo)) * BINS)))]++;
          else {
            // Reservoir sampling (Vitter's algorithm R) keeps an even sample of an unbounded stream.
            seen++;
            if (reservoir.length < 8192) reservoir.push(v);
            else { seed = (Math.imul(seed, 1664525) + 1013904223) >>> 0; const j = seed % seen; if (j < 8192) reservoir[j] = v; }
          }
          wsq += v * v;
          if (++wn === win) { trend.push(Math.sqrt(wsq / wn)); wsq = 0; wn = 0; }
        }
      },
      finish() {
        ctx.evidence('histogram', () => {
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
