// The measurable floor of a level figure: below a millionth of its channel's RMS (−120 dB) a band, order or envelope level
// is rounding, not content, and is not put in decibels against anything.
import { metresPerSecond2 } from '../../stages/acceleration-units.js';
import type { WatchedFeature } from './options.js';
import { decibelsOf } from './score.js';

// The ratio, 10⁻⁶, is the stages' too (the envelope's dominant line is given only above it).
import { FLOOR_RATIO } from '../../stages/measurable-floor.js';
export { FLOOR_RATIO };

/** Lower band edge of a velocity column (velocity_10_1000_rms → 10; "p" for a decimal point). */
const velocityLowEdge = (name: string): number | null => {
  const m = /^velocity_([0-9p]+)_[0-9p]+_rms$/.exec(name);
  const lo = m ? Number(m[1].replace('p', '.')) : NaN;
  return lo > 0 ? lo : null;
};

/**
 * The floor of a feature in its own unit on a channel of RMS `rms`: `ratio` × rms for amplitudes in the channel's unit (its
 * square for mean squares); for velocity in mm/s, the most a band of acceleration at that floor integrates to (1/(2π·f_lo) at
 * its lower edge, velocity PSD = acceleration PSD / (2πf)²). Null where a figure has none (ratios, frequencies, counts, dB) or the RMS is unknown.
 */
export function floorOf(feature: Pick<WatchedFeature, 'name' | 'unit' | 'level'>, channelUnit: string, rms: number, ratio = FLOOR_RATIO): number | null {
  if ((feature.level !== 'amplitude' && feature.level !== 'power') || !(rms >= 0)) return null;
  if (feature.unit === '[unit]') return ratio * rms;
  if (feature.unit === '[unit]^2') return (ratio * rms) ** 2;
  if (feature.unit === 'mm/s') {
    const lo = velocityLowEdge(feature.name), toSi = metresPerSecond2(channelUnit);
    return lo != null && toSi != null ? (ratio * rms * toSi * 1000) / (2 * Math.PI * lo) : null;
  }
  return null;
}

/** Which side of a comparison lies below its floor: the baseline's median, the value, or both. */
export type BelowFloor = 'baseline' | 'value' | 'both';

export interface FloorReading {
  below: BelowFloor;
  /** The floor the change is bounded by, in the feature's unit: the baseline's where it lies below, else the value's. */
  floor: number;
  /** A bound in place of the level change (20·log10, or 10·log10 for a power): at least this rise from a baseline below its floor, at least this fall to a value below its own; null for both. */
  changeDb: number | null;
}

/**
 * A value against its baseline where either lies below its floor; null where neither does (then scored as ever). Below its
 * floor a figure is only known to be smaller than the floor, so a change from or to it is bounded by the floor, and two
 * figures below it are equal for all anyone can measure.
 */
export function againstFloor(value: number, valueFloor: number | null, median: number, baselineFloor: number | null, level: 'amplitude' | 'power' = 'amplitude'): FloorReading | null {
  const valueBelow = valueFloor != null && Math.abs(value) < valueFloor;
  const baselineBelow = baselineFloor != null && Math.abs(median) < baselineFloor;
  if (valueBelow && baselineBelow) return { below: 'both', floor: valueFloor, changeDb: null };
  if (baselineBelow) return { below: 'baseline', floor: baselineFloor, changeDb: value > 0 && baselineFloor > 0 ? decibelsOf(value / baselineFloor, level) : null };
  if (valueBelow) return { below: 'value', floor: valueFloor, changeDb: median > 0 && valueFloor > 0 ? decibelsOf(valueFloor / median, level) : null };
  return null;
}
