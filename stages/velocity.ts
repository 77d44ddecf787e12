// Velocity RMS of acceleration channels by integration in the frequency domain: velocity PSD = acceleration PSD / (2πf)².
// Broadband velocity in a 10–1000 Hz band is the figure machine-vibration evaluation uses (ISO 20816-1, from memory).
import { metresPerSecond2 } from './acceleration-units.js';
import { READ_FRACTION } from './dsp/decimate.js';
import { LONGEST_SEGMENT } from './dsp/leakage.js';
import { bandMeanSquare, resolutionOf, type Psd, type WelchOptions } from './dsp/welch.js';
import { hzName } from './names.js';
import { spectrumOf } from './spectrum.js';
import { pct } from './quality/flag.js';
import { BINS_ABOVE, BINS_BELOW, EDGE_ERROR, LINE_OVER_CONTINUUM, MOST_TIMES, edgeLine, type EdgeLine } from './velocity-edge.js';
import type { StageDefinition } from './stage.js';

// Integration in the frequency domain: velocity's power is acceleration's divided by (2πf)²; DC carries none.
const velocityPerAcceleration = (f: number): number => (f > 0 ? 1 / (2 * Math.PI * f) ** 2 : 0);

export interface VelocityOptions { ranges: [number, number][]; spectrum: WelchOptions }

const col = (lo: number, hi: number) => `velocity_${hzName(lo)}_${hzName(hi)}_rms`;

/**
 * Largest error (a fraction of the velocity RMS) a steady tone at the band's lowest one-third-octave above its lower edge
 * (lo·10^(0.1), 12.59 Hz for 10 Hz) may carry from the spectrum's resolution (our choice).
 */
export const LOW_TONE_ERROR = 0.0025;

// A Hann periodogram's main lobe weighted by 1/(2πf)² reads a tone at f high by about (r/f)²/2 at resolution r (measured with
// scipy.signal.get_window and bandMeanSquare's fractional-bin sum: +0.08 % at r/f = 0.04, +0.30 % at 0.08, test/fixtures/make-velocity-vectors.py).
/** The coarsest resolution (Hz) at which a tone at lo·10^(0.1) reads within LOW_TONE_ERROR: r = f·√(2·error). */
export const velocityResolution = (lo: number): number => lo * 10 ** 0.1 * Math.sqrt(2 * LOW_TONE_ERROR);

/**
 * Shared-spectrum bins above DC from which the shared spectrum takes over: there the weight's bias, (r/f)²/2, is at most
 * 0.125 % (our choice, from the same measure).
 */
export const HANDOVER_BINS = 20;

// Multistage decimation (Crochiere & Rabiner 1983, ch. 5), read below fs/(6D) as the octave stage reads it.
/**
 * The finer spectrum velocity asks for when the shared segment cannot resolve the band's lower edge (`velocityResolution`):
 * every D-th sample of the low-passed channel (`spectrumOf` with D, the octave stage's mechanism), D the largest power of two
 * that keeps the hand-over, from HANDOVER_BINS shared bins up to twice that, below fs/(6D); its segment the shared one, or
 * longer where the resolution needs it. With the default spectrum that is D = 16, a segment of 4096: the octave stage's
 * spectrum at 25.6, 48 and 51.2 kHz, shared by key. Null when the shared segment resolves the lower edge.
 */
export function velocitySpectrum(lo: number, spectrum: WelchOptions, fs: number): { segment: number; decimation: number } | null {
  const need = velocityResolution(lo);
  if (fs / spectrum.segment <= need) return null;
  let span = spectrum.segment;
  while (span < LONGEST_SEGMENT && fs / span > need) span *= 2;
  const handoverTop = (2 * HANDOVER_BINS * fs) / spectrum.segment;
  let d = 1;
  while (handoverTop <= (READ_FRACTION * fs) / (2 * d) && spectrum.segment * 2 * d <= LONGEST_SEGMENT) d *= 2;
  return { segment: Math.max(spectrum.segment, span / d), decimation: d };
}

// Raised-cosine cross-fade between two estimates over [a, b] (a Tukey taper, Harris, Proc. IEEE 66(1), 1978).
/** The finer spectrum's share at f: 1 below a, 0 above b, cos² between, so a tone in the hand-over counts once. */
export const fineShare = (f: number, a: number, b: number): number => (f <= a ? 1 : f >= b ? 0 : Math.cos(((f - a) / (b - a)) * (Math.PI / 2)) ** 2);

/**
 * Velocity mean square in [lo, hi): from the finer spectrum up to half its `upTo`, from the shared one above its `upTo`,
 * and cross-faded between (`fineShare`), both summed with fractional bins (`bandMeanSquare`). Without a finer spectrum, or
 * one that reaches the whole band, the one spectrum alone.
 */
export function velocityMeanSquare(shared: Psd, fine: Psd | null, lo: number, hi: number): number {
  if (!fine) return bandMeanSquare(shared, lo, hi, velocityPerAcceleration);
  const b = fine.upTo ?? Infinity, a = b / 2;
  if (hi <= a) return bandMeanSquare(fine, lo, hi, velocityPerAcceleration);
  const toFine = (f: number) => velocityPerAcceleration(f) * fineShare(f, a, b);
  const toShared = (f: number) => velocityPerAcceleration(f) * (1 - fineShare(f, a, b));
  return bandMeanSquare(fine, lo, Math.min(hi, b), toFine) + bandMeanSquare(shared, Math.max(lo, a), hi, toShared);
}

export const velocity: StageDefinition<VelocityOptions> = {
  group: 'velocity_bands',
  section: 'velocity_bands',
  spectral: true,
  columns: (o) => o.ranges.map(([lo, hi]) => ({ name: col(lo, hi), unit: 'mm/s', description: `Velocity RMS in [${lo}, ${hi}) Hz of an acceleration channel, integrated in the frequency domain from the Welch PSD (below some hundreds of Hz from a finer one of every D-th sample where the spectrum's segment cannot resolve ${lo} Hz).` })),
  create(ctx, o) {
    const s = spectrumOf(ctx, o.spectrum);
    const factor = metresPerSecond2(ctx.unit);
    // The lowest band edge sets the finer spectrum; bands with higher edges read it too (one spectrum a channel).
    const acceleration = ctx.quantity === 'acceleration' && factor !== undefined && o.ranges.length > 0;
    const low = acceleration ? velocitySpectrum(Math.min(...o.ranges.map(([lo]) => lo)), o.spectrum, ctx.sampleRate) : null;
    const fine = low ? spectrumOf(ctx, { ...o.spectrum, segment: low.segment }, false, low.decimation) : null;
    return {
      push() {},
      finish() {
        const out: Record<string, number | null> = Object.fromEntries(o.ranges.map(([lo, hi]) => [col(lo, hi), null]));
        if (ctx.quantity !== 'acceleration') return out;
        if (factor === undefined) {
          ctx.note(`${ctx.name}: unit "${ctx.unit}" is not an acceleration unit quern converts (m/s^2, mm/s^2, g); velocity left empty`);
          return out;
        }
        const psd = s.psd();
        if (!psd) return out;
        // The finer spectrum where it resolves more finely than the shared one (a recording or gap-free stretch may cut it short).
        const finer = fine?.psd() ?? null;
        const low = finer && resolutionOf(finer) < resolutionOf(psd) ? finer : null;
        for (const [lo, hi] of o.ranges) {
          if (hi > ctx.sampleRate / 2) { ctx.note(`${ctx.name}: velocity band ${lo}–${hi} Hz reaches above the Nyquist frequency; left empty`); continue; }
          const ms = velocityMeanSquare(psd, low, lo, hi);
          out[col(lo, hi)] = Math.sqrt(ms) * factor * 1000; // m/s → mm/s
          // The edge is read from the finer spectrum wherever that holds it whole (below half its reach).
          const line = edgeLine(low && lo < (low.upTo ?? Infinity) / 2 ? low : psd, lo, hi, ms, velocityPerAcceleration, o.spectrum.window);
          if (line) ctx.flag(lowEdgeFlag(col(lo, hi), lo, hi, line));
        }
        return out;
      },
    };
  },
};

/**
 * The warning for a band whose lower edge a spectral line's lobe reaches, so that the window moves more than 5 % of the
 * figure across the edge (`edgeLine`). Per cent as the other flags write it (`pct`, three digits), the sign as "low" or
 * "high"; beyond twice its value, a factor. What to do: a longer segment or recording, or a lower band edge beside the band.
 */
function lowEdgeFlag(column: string, lo: number, hi: number, line: EdgeLine) {
  const { frequency: f, share, error, resolution: r } = line;
  const off = error <= 1 ? `${pct(Math.abs(error))} ${error < 0 ? 'low' : 'high'}`
    : error >= MOST_TIMES - 1 - 1e-6 ? `${MOST_TIMES} times the band's own velocity or more` : `${Number((1 + error).toPrecision(2))} times the band's own velocity`;
  const bins = (lo - f) / r;
  const where = bins > 2
    ? `a line at ${f.toPrecision(3)} Hz (below the band) lies ${bins.toFixed(1)} resolution bins (${r.toPrecision(2)} Hz) below the ${lo} Hz edge, and the window's side lobes carry part of it into the band`
    : `a line at ${f.toPrecision(3)} Hz (${f >= lo ? `${pct(share)} of the band's velocity` : 'below the band'}) lies within the window's main lobe (±${(2 * r).toPrecision(2)} Hz at ${r.toPrecision(2)} Hz resolution) of the ${lo} Hz edge, which moves part of it ${error < 0 ? 'out of' : 'into'} the band`;
  return {
    name: 'velocity_low_edge', severity: 'warn' as const, value: error,
    threshold: `warn where a spectral line (a bin ${10 * Math.log10(LINE_OVER_CONTINUUM)} dB over the median of its neighbourhood) from ${BINS_BELOW} resolution bins below a velocity band's lower edge to ${BINS_ABOVE} above it moves more than ${pct(EDGE_ERROR)} of the figure across the edge (our choice)`,
    evidence: { band_low_hz: lo, band_high_hz: hi, line_hz: f, line_share: share, resolution_hz: r },
    message: `${column} may read ${off}: ${where}; take a longer spectrum.segment or recording, or add a band with a lower edge below ${lo} Hz beside ${lo}–${hi} Hz`,
  };
}
