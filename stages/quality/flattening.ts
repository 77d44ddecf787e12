// Flattening: a waveform clipped or compressed near its limit before it was stored, told by its 4× interpolated peak
// (ITU-R BS.1770-4 Annex 2) reaching where an undistorted band-limited waveform does not. A true-peak estimate assumes an
// undistorted signal; on a flattened one the reconstruction of its squared-off crests overshoots them (Gibbs), the
// "0 dBFS+" overs of clipped and limited recordings (Nielsen and Lund, AES 109th Convention, 2000; from memory).

/** What the peaks say about a flattened waveform: the evidence a flag gives. */
export interface Flattening {
  samplePeak: number;
  interpolatedPeak: number;
  /** The limit the interpolated peak went past, or null when none is known. */
  limit: number | null;
  /** With no limit known: how many samples hold the largest magnitude. */
  repeats: number | null;
  /** With no limit known: whether the largest magnitude holds so many samples, approached smoothly, that it is a flat top whatever the overshoot. */
  flatTop?: boolean;
  /** The samples counted, with a flat top. */
  samples?: number;
  /** With limits not centred on zero: their middle, and the interpolated peak of the samples measured from it (held to half their span). */
  centredOn?: number;
  excursion?: number;
}

/**
 * How far past a limit the interpolated peak may lie before the waveform counts as flattened, as a share of the limit. A
 * waveform that kept within the limit has its band-limited reconstruction within it too, up to the estimate's own error
 * (2·10⁻⁴ up to fs/2.56; nearer Nyquist it reads low, not high). Undistorted band-limited noise overshoots its largest sample
 * by 3.4 % at the median (measured, 0.1 to 10 s at fs/2.56), so one whose samples come within a few per cent of the limit can
 * pass it by this much between samples: it then reached its limit, which the flag says too. Tones, sweeps and shocks
 * overshoot theirs by under 0.3 %. Our choice.
 */
export const FLATTENED_MARGIN = 0.1;

/** With no limit known, the fewest samples at the largest magnitude that make it a flat top rather than one crest (ours). */
export const FEWEST_REPEATS = 8;

/**
 * With no limit known, the share of samples at the largest magnitude below which repeats mean a flat top: a tone locked to
 * the sampling repeats its largest sample at least once a cycle, and overshoots it by more than FLATTENED_MARGIN only below
 * 7.1 samples a cycle, 1/cos(π/r) − 1 (derived), so at 14 % of its samples or more. A flattened waveform spends less time on its top.
 */
export const MOST_REPEATS_SHARE = 0.1;

/**
 * With no limit known, how near below the largest magnitude other values must come for a top held by MOST_REPEATS_SHARE of the
 * samples or more to be a flat top, as a share of it: a waveform flattened at a value reaches it smoothly, through values just
 * below it, where a tone locked to the sampling, a sine on a coarse grid of stored values and an ideal two-level square wave
 * hold a few exact values, the nearest a whole step below (a sine spanning ±100 steps keeps its top on 6.4 % of its samples,
 * (2/π)·√(1/100), derived, under the share). A clipped waveform rarely overshoots when interpolated (a sine clipped at 0.9 of
 * its amplitude, 0.00 %, measured), so the repeats alone tell it. Our choice.
 */
export const SMOOTH_APPROACH = 0.01;

/**
 * Whether the waveform was flattened: its interpolated peak, measured from the middle of its limits, beyond half their span by
 * more than `margin` of it (each end held to its own: a one-sided range [0, 16] is flattened at 0 as at 16); or, with no
 * limits known, beyond its largest sample by that much while at least `fewest` samples, but under `share` of them, hold that
 * largest magnitude; or `share` of the samples or more hold it while other values (`near`: how many of a sample of the
 * channel's values lie within `approach` below it) come smoothly up to it. Null when none holds.
 * `centred`: the interpolated peak of the samples less the middle of the limits (a limit pair not centred on zero).
 */
export function flattening(
  samplePeak: number, interpolatedPeak: number, limits: [number, number] | null, repeats: { count: number; samples: number; near?: number } | null,
  margin = FLATTENED_MARGIN, fewest = FEWEST_REPEATS, share = MOST_REPEATS_SHARE, centred: number | null = null,
): Flattening | null {
  if (limits) {
    const middle = (limits[0] + limits[1]) / 2, half = (limits[1] - limits[0]) / 2;
    // Centred on zero (within a step's worth), the larger magnitude is the limit, as it always was; otherwise each end's distance from the middle.
    if (centred == null || Math.abs(middle) <= 0.01 * half) {
      const limit = Math.max(Math.abs(limits[0]), Math.abs(limits[1]));
      return interpolatedPeak > limit * (1 + margin) ? { samplePeak, interpolatedPeak, limit, repeats: null } : null;
    }
    return centred > half * (1 + margin) ? { samplePeak, interpolatedPeak, limit: half, repeats: null, centredOn: middle, excursion: centred } : null;
  }
  if (!repeats || repeats.count < fewest) return null;
  const overshoots = interpolatedPeak > samplePeak * (1 + margin);
  if (repeats.count < share * repeats.samples) return overshoots ? { samplePeak, interpolatedPeak, limit: null, repeats: repeats.count } : null;
  return (repeats.near ?? 0) > 0 ? { samplePeak, interpolatedPeak, limit: null, repeats: repeats.count, flatTop: true, samples: repeats.samples } : null;
}

/** How many of `values` lie within `approach` of `top` below it in magnitude (the smooth approach of a flat top). */
export function nearBelow(values: Float64Array, top: number, approach = SMOOTH_APPROACH): number {
  let near = 0;
  const from = top * (1 - approach);
  for (let i = 0; i < values.length; i++) { const a = Math.abs(values[i]); if (a >= from && a < top) near++; }
  return near;
}
