// Pulses lost again and again at one place in the revolution point at the mark or the pickup (a reflective tape or target missing
// or dirty, the pickup's gap; common practice) before the trigger: the pulse_train flag says so first. The speed of a train of
// known period is 60 / (period × pulses_per_rev) rpm (common practice).
import { describe, expect, it } from 'vitest';
import type { Flag } from '../stages/quality/flag.js';
import { channel, reduceChannels } from './reduce-signal.js';

/** A 5 V trapezoid at pulse phase u: linear edges 0.01 long, high for 0.3. */
const trapezoid = (u: number) => 5 * (u < 0.01 ? u / 0.01 : u < 0.3 ? 1 : u < 0.31 ? 1 - (u - 0.3) / 0.01 : 0);
const fs = 12800, n = 10 * fs, RPM = 1500;

/** pulsesPerRev marks a revolution at RPM; pulse k (counted from the recording's start) is left out where `lost(k)`. */
async function flagOf(pulsesPerRev: number, lost: (k: number) => boolean) {
  const rate = (RPM / 60) * pulsesPerRev;
  const x = Float64Array.from({ length: n }, (_, i) => { const p = 0.3 + rate * (i / fs), k = Math.floor(p); return lost(k) ? 0 : trapezoid(p - k); });
  const decl = channel({ name: 'tacho', quantity: 'voltage', unit: 'V', scale: 10, pulses_per_rev: pulsesPerRev, trigger_level: null, trigger_hysteresis: null });
  const { result, row } = await reduceChannels([x], [decl], fs, {});
  return { flag: result.quality[0].flags.find((f) => f.name === 'pulse_train') as Flag, row: row('tacho') };
}

const hint = /; the pulses go missing at one place in the revolution: check the reflective tape or target there \(missing or dirty\) and the pickup's gap first, then declare trigger_level/;

describe('pulses missing at one place in the revolution', () => {
  it('one mark a revolution, every 7th pulse missing: warns, naming the tape or target and the pickup\'s gap first', async () => {
    const { flag, row } = await flagOf(1, (k) => k % 7 === 3);
    expect(flag.severity).toBe('warn');
    expect(flag.message).toMatch(hint);
    expect(Math.abs((row.speed_mean_rpm as number) / RPM - 1)).toBeLessThan(1e-6);
  });

  it('two marks a revolution, the second lost every 4th revolution: the same; lost at either mark in turn: the trigger first', async () => {
    const one = await flagOf(2, (k) => k % 8 === 5);
    expect(one.flag.severity).toBe('warn');
    expect(one.flag.evidence.missing).toBeGreaterThan(20);
    expect(one.flag.message).toMatch(hint);
    // Every 7th pulse: an odd count, so the lost pulse falls at the first mark, then the second, in turn.
    const both = await flagOf(2, (k) => k % 7 === 3);
    expect(both.flag.severity).toBe('warn');
    expect(both.flag.evidence.missing).toBeGreaterThan(20);
    expect(both.flag.message).not.toMatch(/one place in the revolution/);
    expect(both.flag.message).toMatch(/; declare trigger_level and trigger_hysteresis/);
    for (const r of [one.row, both.row]) expect(Math.abs((r.speed_mean_rpm as number) / RPM - 1)).toBeLessThan(1e-6);
  });
});
