// The measurable floor: below a millionth of its channel's RMS (−120 dB) a level is rounding, not content; the stages that
// judge a figure by its level and the trends' scoring share it.

/**
 * −120 dB of the channel's RMS: finer than any converter resolves (a 24-bit converter spans about 144 dB of full scale at best,
 * from memory; float32 keeps 1.2e-7 of a value, common practice), and far above float64's rounding of sums and transforms (1e-16).
 */
export const FLOOR_RATIO = 1e-6;

/** Whether a level in the channel's unit lies below the measurable floor of a channel of RMS `rms` (mean included). */
export const belowMeasurableFloor = (level: number, rms: number, ratio = FLOOR_RATIO) => level < ratio * rms;
