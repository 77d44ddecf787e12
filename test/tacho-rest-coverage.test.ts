// The pulse_train flag's coverage leaves out the time a shaft sits at rest after coasting to rest (or before starting from rest):
// no pulse can come there. Pulse times in closed form: a rate f(t) = f0 + a·t rev/s turns f0·t + a·t²/2 revolutions (kinematics
// of uniform acceleration), so the shaft stops at t = −f0/a; a train that merely stops while the shaft turns still reads uncovered.
import { describe, expect, it } from 'vitest';
import type { Flag } from '../stages/quality/flag.js';
import { channel, reduceChannels } from './reduce-signal.js';

const fs = 12800, seconds = 6;

/** A 4.5 V trapezoid at pulse phase u: linear edges 0.01 of a pulse long, high for 0.05. */
const trapezoid = (u: number) => 4.5 * (u < 0.01 ? u / 0.01 : u < 0.05 ? 1 : u < 0.06 ? 1 - (u - 0.05) / 0.01 : 0);

/** A tacho (1 pulse a revolution) turning `revs(t)` revolutions by time t, the first mark at 0.3 of a revolution; no pulse at or after `lostFrom` s. */
function tacho(revs: (t: number) => number, lostFrom = Infinity): Float64Array {
  return Float64Array.from({ length: seconds * fs }, (_, i) => {
    const t = i / fs, r = revs(t) - 0.3;
    return r < 0 || t >= lostFrom ? 0 : trapezoid(r - Math.floor(r));
  });
}

async function pulseTrainFlag(x: Float64Array): Promise<Flag> {
  const decl = channel({ name: 'tacho', quantity: 'voltage', unit: 'V', scale: 10, pulses_per_rev: 1, trigger_level: null, trigger_hysteresis: null });
  const { result } = await reduceChannels([x], [decl], fs, {});
  return result.quality[0].flags.find((f) => f.name === 'pulse_train') as Flag;
}

// 1800 rpm (30 rev/s) slowing at 7.5 rev/s² to rest at 4 s, then at rest to 6 s; and its mirror, at rest to 2 s, then 0 → 30 rev/s by 6 s.
const coast = (t: number) => (t < 4 ? 30 * t - 3.75 * t * t : 60);
const start = (t: number) => (t < 2 ? 0 : 3.75 * (t - 2) ** 2);

describe('pulse_train coverage with the shaft at rest at an end', () => {
  it('a shaft coasting to rest at 4 s and at rest for 2 s reads ok, the 2 s at rest named and left out of the coverage', async () => {
    const flag = await pulseTrainFlag(tacho(coast));
    expect(flag.severity, flag.message).toBe('ok');
    expect(flag.value as number).toBeGreaterThan(0.99);
    // At rest from the closed-form stop, 4 s, to the end: 2 s, within a sample's timing of the edges (the rate line is exact for a linear ramp).
    expect(Math.abs((flag.evidence.at_rest_s as number) - 2)).toBeLessThan(0.01);
    expect(flag.message).toMatch(/the shaft was at rest for 2(\.0+\d*)? s after it came to rest at 4(\.0+\d*)? s, time left out of the coverage/);
  });

  it('a shaft at rest for 2 s and then starting to turn reads ok, the rest named', async () => {
    const flag = await pulseTrainFlag(tacho(start));
    expect(flag.severity, flag.message).toBe('ok');
    expect(Math.abs((flag.evidence.at_rest_s as number) - 2)).toBeLessThan(0.01);
    expect(flag.message).toMatch(/at rest for 2(\.0+\d*)? s before it started turning at 2(\.0+\d*)? s/);
  });

  // Pulses lost while the shaft turns: the good intervals cover about t_lost / (6 s − 2 mean intervals) of the recording, as before.
  for (const [lost, severity] of [[4, 'warn'], [2.5, 'fail']] as const) {
    it(`a steady 1800 rpm train whose pulses vanish at ${lost} s of 6 s still reads uncovered (${severity}), no rest named`, async () => {
      const flag = await pulseTrainFlag(tacho((t) => 30 * t, lost));
      expect(flag.severity, flag.message).toBe(severity);
      expect(flag.evidence.at_rest_s).toBe(0);
      // Pulses at (m + 0.3)/30 s up to the loss: covered from the first to the last, over 6 s less two 1/30 s intervals.
      const first = 0.3 / 30, last = (Math.ceil(lost * 30 - 0.3) - 1 + 0.3) / 30;
      expect(Math.abs((flag.value as number) - (last - first) / (6 - 2 / 30))).toBeLessThan(2e-3);
      expect(flag.message).not.toMatch(/at rest/);
    });
  }

  it('a train that vanishes at 4 s while the shaft still slows from 15 rev/s (30 pulses before it would stop) reads uncovered', async () => {
    // 1800 rpm slowing at 3.75 rev/s² would stop at 8 s: at 4 s it turns 15 rev/s, with 15²/(2·3.75) = 30 revolutions left.
    const flag = await pulseTrainFlag(tacho((t) => 30 * t - 1.875 * t * t, 4));
    expect(flag.severity, flag.message).toBe('warn');
    expect(flag.evidence.at_rest_s).toBe(0);
    expect(flag.message).not.toMatch(/at rest/);
  });
});
