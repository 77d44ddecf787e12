// How far a steady tone's power leaks past a band edge in a windowed periodogram summed with fractional-bin edges.
import type { WindowName } from './window.js';

/**
 * Resolution bins a tone must keep from a band edge so that at most 0.05 dB of its power leaks past it, whatever its place
 * on the bin grid: the window's spectral kernel (Harris, Proc. IEEE 66(1), 1978) summed as `bandMeanSquare` sums bins,
 * measured with scipy.signal.get_window (Hann 1.75 bins: 0.025 dB; Hamming 1.5: 0.05 dB; boxcar, whose side lobes fall
 * slowly, 10: 0.05 dB).
 */
export const LEAKAGE_BINS: Record<WindowName, number> = { hann: 1.75, hamming: 1.5, boxcar: 10 };

/** Largest spectral power of two quern takes (as `spectrum.segment`). */
export const LONGEST_SEGMENT = 1 << 20;

/** Whether a tone `roomHz` from the band edge keeps its power, at a resolution of `resolutionHz` (fs / samples a periodogram spans). */
export const keepsTone = (roomHz: number, resolutionHz: number, window: WindowName): boolean => roomHz >= LEAKAGE_BINS[window] * resolutionHz;

/** The shortest power-of-two periodogram at `fs` that keeps a tone `roomHz` from a band edge (beyond LONGEST_SEGMENT when none fits). */
export function segmentKeeping(roomHz: number, fs: number, window: WindowName): number {
  let n = 2;
  while (n <= LONGEST_SEGMENT && !keepsTone(roomHz, fs / n, window)) n *= 2;
  return n;
}
