// Flattening: a waveform clipped or compressed near its limit before it was stored, told by its 4× interpolated peak
// (ITU-R BS.1770-4 Annex 2) reaching where an undistorted band-limited waveform does not. A true-peak estimate assumes an
// undistorted signal; on a flattened one the reconstruction of its squared-off crests overshoots them (Gibbs), the
// "0 dBFS+" overs of clipped and limited recordings (Nielsen and Lund, AES 109th Convention, 2000; from memory).

/** What the peaks say about a flattened waveform: the evidence a flag gives. */
export interface Flattening {
  samplePeak: number;
  interpolatedPeak: number;
  /** The limit the interpolated peak went past (the larger magnitude of the channel's limits), or null when none is known. */
  limit: number | null;
  /** With no limit known: how many samples hold the largest magnitude. */
  repeats: number | null;
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
 * Whether the waveform was flattened: its interpolated peak beyond the larger magnitude of its limits by more than `margin`
 * of it; or, with no limits known, beyond its largest sample by that much while at least `fewest` samples, but under `share`
 * of them, hold that largest magnitude. Null when neither holds.
 */
export function flattening(
  samplePeak: number, interpolatedPeak: number, limits: [number, number] | null, repeats: { count: number; samples: number } | null,
  margin = FLATTENED_MARGIN, fewest = FEWEST_REPEATS, share = MOST_REPEATS_SHARE,
): Flattening | null {
  if (limits) {
    const limit = Math.max(Math.abs(limits[0]), Math.abs(limits[1]));
    return interpolatedPeak > limit * (1 + margin) ? { samplePeak, interpolatedPeak, limit, repeats: null } : null;
  }
  if (!repeats) return null;
  const flat = repeats.count >= fewest && repeats.count < share * repeats.samples && interpolatedPeak > samplePeak * (1 + margin);
  return flat ? { samplePeak, interpolatedPeak, limit: null, repeats: repeats.count } : null;
}
