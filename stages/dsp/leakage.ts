// How far a steady tone's power leaks past a band edge in a windowed periodogram summed with fractional-bin edges.
import type { WindowName } from './window.js';

/**
 * Resolution bins a tone must keep from a band edge so that at most 0.05 dB of its power leaks past it, whatever its place
 * on the bin grid: the window's spectral kernel (Harris, Proc. IEEE 66(1), 1978) summed as `bandMeanSquare` sums bins,
 * measured with scipy.signal.get_window (Hann 1.75 bins: 0.025 dB; Hamming 1.5: 0.05 dB; boxcar, whose side lobes fall
 * slowly, 10: 0.05 dB).
 */
export const LEAKAGE_BINS: Record<WindowName, number> = { hann: 1.75, hamming: 1.5, boxcar: 10 };

/**
 * Resolution bins a tone must keep from a band edge so that at most 1/10,000 of its power (−40 dB) crosses it into the
 * neighbouring band, whatever its place on the bin grid: the same kernel and sum, measured with scipy.signal.get_window
 * (Hann 3 bins: −41.6 dB; Hamming, whose far side lobes fall 6 dB an octave, 20: −40.9 dB; boxcar 1500: −40.8 dB).
 */
export const NEIGHBOUR_BINS: Record<WindowName, number> = { hann: 3, hamming: 20, boxcar: 1500 };

/** Largest spectral power of two quern takes (as `spectrum.segment`). */
export const LONGEST_SEGMENT = 1 << 20;

/**
 * A band's room at the resolution it needs: `keep`, the least distance from its edges of a tone inside it that must keep its
 * power; `shut`, the least distance from its edges of a tone outside it that must stay out.
 */
export interface BandRoom { keep: number; shut: number }

/** The coarsest resolution (Hz) at which a band's tones keep their power and its neighbours' tones stay out. */
export const resolutionNeeded = (room: BandRoom, window: WindowName): number => Math.min(room.keep / LEAKAGE_BINS[window], room.shut / NEIGHBOUR_BINS[window]);

/** Whether a band with `room` is resolved at `resolutionHz` (fs / samples a periodogram spans). */
export const resolvesBand = (room: BandRoom, resolutionHz: number, window: WindowName): boolean => resolutionHz <= resolutionNeeded(room, window);

/** The shortest power-of-two periodogram at `fs` that resolves a band with `room` (beyond LONGEST_SEGMENT when none fits). */
export function segmentKeeping(room: BandRoom, fs: number, window: WindowName): number {
  let n = 2;
  while (n <= LONGEST_SEGMENT && !resolvesBand(room, fs / n, window)) n *= 2;
  return n;
}
