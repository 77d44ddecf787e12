// How long a shaft slowing to rest turns after its last pulse, so the time it then sits at rest is not read as pulses lost.
import { rateOf, rateSlope, type Intervals } from './pulse-train.js';

/**
 * The most pulses a shaft may still turn after its last one and count as coming to rest before the next (our choice: one pulse,
 * and the pulse tolerance of 0.25 beyond it for a deceleration that fades as the speed does).
 */
const MOST_PULSES_LEFT = 1.25;

// Uniform deceleration α from the rate q turns q²/(2α) more pulses and takes q/α to rest (kinematics of uniform acceleration);
// q is the rate's line through the last two revolutions (rateSlope, exact for a linear ramp) at the last pulse.
/**
 * Time from the pulse at `last` to rest, where the rate's line through `older` and `newer` (good intervals a revolution each,
 * `newer` ending at `last`) falls and the shaft would turn under MOST_PULSES_LEFT more pulses before it stops: no pulse was lost
 * after `last`, the shaft came to rest. 0 where the line reaches zero by `last`; null where it does not fall, or more pulses
 * would have come (a train that stops while the shaft still turns: pulses lost).
 */
export function timeToRest(older: Intervals, newer: Intervals, last: number, most = MOST_PULSES_LEFT): number | null {
  const s = rateSlope(older, newer);
  if (s == null || !(s < 0)) return null;
  const n = rateOf(newer), q = n.rate + s * (last - n.centre);
  if (!(q > 0)) return 0;
  return (q * q) / (2 * -s) <= most ? q / -s : null;
}

/** The same at a train's start, in reversed time: from rest to the first pulse at `first`, with `first2` the two revolutions after it in time order. */
export function timeFromRest(first2: Intervals, pulsesPerRev: number, first: number, most = MOST_PULSES_LEFT): number | null {
  const back = first2.map(([a, b]): [number, number] => [-b, -a]).reverse();
  return timeToRest(back.slice(0, pulsesPerRev), back.slice(pulsesPerRev), -first, most);
}
