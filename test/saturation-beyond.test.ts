// Saturation: clipping at the instrument range against data that lie past it because the declaration is wrong. A clipped
// signal rests at the limit it was clipped at (numpy.clip's output; common practice); a sine of amplitude A spends the share
// (2/π)·acos(r/A) of its samples beyond ±r (the arcsine distribution of a sine's values, textbook).
import { describe, expect, it } from 'vitest';
import type { Flag } from '../stages/quality/flag.js';
import { channel, reduce, sine } from './reduce-signal.js';

const fs = 10000, n = 20000;
const beyondShare = (r: number, a: number) => (2 / Math.PI) * Math.acos(r / a);
const saturationOf = async (x: Float64Array, over: Parameters<typeof channel>[0]) => {
  const { row, result } = await reduce(x, fs, {} as never, channel({ range: [-50, 50], ...over }));
  return { row, flag: result.quality[0].flags.find((f) => f.name === 'saturation') as Flag };
};
const DECLARATION = /check this channel's range and scale \(and offset\) in archive\.yaml first/;
const CLIPPED = /: clipped data says nothing about the input beyond the range, so peak, crest factor and kurtosis read low; retake the measurement with a larger range$/;

describe('saturation: clipped at the range, or past it', () => {
  it('a 73 Hz sine of amplitude 80 clipped at ±50, as numpy.clip clips: the message as ever, nothing beyond the range', async () => {
    const { row, flag } = await saturationOf(sine(n, fs, 73, 80).map((v) => Math.min(50, Math.max(-50, v))), {});
    expect(flag.severity).toBe('fail');
    expect(Math.abs(row.saturation_fraction - beyondShare(50, 80))).toBeLessThan(0.002);
    expect(flag.message).toMatch(CLIPPED);
    expect(flag.message).not.toMatch(DECLARATION);
    expect([flag.evidence.beyond_samples, flag.evidence.furthest_value]).toEqual([0, null]);
  });

  it('clipped at a rail 0.3 % of the span past the declared range: still clipping', async () => {
    const { flag } = await saturationOf(sine(n, fs, 73, 80).map((v) => Math.min(50.3, Math.max(-50.3, v))), {});
    expect(flag.severity).toBe('fail');
    expect(flag.message).toMatch(CLIPPED);
  });

  it('scale 40000 where the data run to 10,000 on a range of ±50: nearly every sample far past it, and the advice is to check the declaration', async () => {
    const a = 10000, { row, flag } = await saturationOf(sine(n, fs, 73, a), { scale: 40000 });
    expect(flag.severity).toBe('fail');
    expect(Math.abs(row.saturation_fraction - beyondShare(50, a))).toBeLessThan(0.002);
    // Beyond the margin of 1 % of the span (1 m/s²): |x| ≥ 51.
    expect(Math.abs((flag.evidence.beyond_samples as number) / n - beyondShare(51, a))).toBeLessThan(0.002);
    expect(Math.abs((flag.evidence.furthest_value as number) - a) / a).toBeLessThan(1e-3);
    expect(flag.message).toMatch(DECLARATION);
    expect(flag.message).toMatch(/lie beyond it by more than 1 % of its span, the furthest at -?(99\d\d(\.\d+)?|10000) m\/s\^2: a signal clipped by the instrument rests at its limit, so these were not clipped there/);
    expect(flag.message).not.toMatch(/clipped data says nothing/);
  });

  it('a sine of amplitude 55 running smoothly past ±50: most of the samples counted lie beyond the margin, so the same advice', async () => {
    const { flag } = await saturationOf(sine(n, fs, 73, 55), {});
    expect(flag.severity).toBe('fail');
    // (2/π)·acos(51/55) over (2/π)·acos(50/55): 0.89 of the samples counted lie past the margin.
    expect(Math.abs((flag.evidence.beyond_samples as number) / (flag.evidence.samples as number) - Math.acos(51 / 55) / Math.acos(50 / 55))).toBeLessThan(0.01);
    expect(flag.message).toMatch(DECLARATION);
  });

  it('one sample at 500 on a range of ±50: far past it, the same advice, and the severity of one sample (warn)', async () => {
    const x = sine(n, fs, 73, 20);
    x[1234] = 500;
    const { flag } = await saturationOf(x, {});
    expect(flag.severity).toBe('warn');
    expect(flag.evidence.beyond_samples).toBe(1);
    expect(flag.message).toMatch(/^1 samples \(0\.005 %\) at or beyond the instrument range \[-50, 50\] m\/s\^2, first at 0\.1234 s, longest run 1; 1 of them \(100 %\) lie beyond it by more than 1 % of its span, the furthest at 500 m\/s\^2/);
    expect(flag.message).toMatch(DECLARATION);
  });
});
