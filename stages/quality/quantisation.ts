// What a converter's step does to a channel's figures: the ideal quantiser's error, uniform over one step (IEEE Std 1241).

/** Ideal quantisation noise RMS of a step q: q/√12 (IEEE Std 1241, uniform error over one step). */
export const quantisationNoise = (step: number) => step / Math.sqrt(12);

/** One-sided density of that noise, q²/12 spread evenly over [0, fs/2]: q²/(6·fs) (IEEE Std 1241, common practice). */
export const quantisationDensity = (step: number, sampleRate: number) => (step * step) / (6 * sampleRate);

/**
 * How far the measured RMS (mean removed) of a quantised channel reads above the signal's: the step's noise q²/12 adds to the
 * signal's power, √(1 + q²/(12·σs²)) − 1, with σs² = σ² − q²/12 taken from the measured σ (Sheppard's correction; common
 * practice, holds where the signal spans several steps or carries noise of half a step or more). Infinite where the measured
 * power is no more than the step's noise.
 */
export function rmsError(step: number, std: number): number {
  const noise = (step * step) / 12, signal = std * std - noise;
  return signal > 0 ? Math.sqrt(1 + noise / signal) - 1 : Infinity;
}

/** The most rounding moves a peak of the given size: half a step of it (an ideal quantiser rounds to the nearest code). */
export const peakError = (step: number, peak: number) => (peak > 0 ? step / 2 / peak : Infinity);

/** The same bound for a mean: the mean of rounded samples lies within half a step of the samples' mean. */
export const meanError = (step: number, mean: number) => (mean !== 0 ? step / 2 / Math.abs(mean) : Infinity);
