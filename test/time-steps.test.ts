// A recording's own times (a CSV time column, an HDF5 or MAT-file time vector) against their nominal step: the trimmed mean
// of the steps near their median (common practice), checked here against the plain formulas on planted times.
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { CLOCK_DIGITS, nominalOf, nominalStep, shortestWithin, startOfTimes, stepCounter, timeRate } from '../stages/read/time-steps.js';
import { fixture, readAll, tempDir } from './helpers.js';

describe('the nominal step of a time vector', () => {
  it('is the mean step where every step is near the median: rounding of printed times averages out', () => {
    // 1/2560 s printed to 7 decimals: steps of 0.0003906 and 0.0003907 s; their mean over the span is the true step.
    const times = Array.from({ length: 1001 }, (_, i) => Number((i / 2560).toFixed(7)));
    expect(nominalOf(times)).toBeCloseTo((times[1000] - times[0]) / 1000, 15);
    expect(1 / nominalOf(times)).toBeCloseTo(2560, 3);
  });

  it('is not pulled by a dropout among the first times, which the counter then finds', () => {
    const times = Float64Array.from({ length: 1000 }, (_, i) => (i < 400 ? i : i + 250) / 1000);
    expect(nominalOf(times)).toBeCloseTo(0.001, 15);
    const steps = stepCounter(nominalOf(times), 1e-5);
    for (const t of times) steps.add(t);
    expect(steps.result()).toMatchObject({ irregular: 1, widest_at_s: 0.65 });
    expect(steps.result().widest_s).toBeCloseTo(0.251, 12);
  });

  it('averages times printed one or two digits coarser than their step to the exact rate, a dropout among them left out', () => {
    // 300 Hz to the millisecond steps by 0.003 and 0.004 s (Python's f'{t:.3f}', as JavaScript's toFixed rounds these);
    // half a second lost after row 1000 must not move it.
    const times = Array.from({ length: 4096 }, (_, i) => Number(((i < 1000 ? i : i + 150) / 300).toFixed(3)));
    const r = timeRate(times, 1e-3);
    expect(r.rate).toBe(300);
    expect(r.lowest).toBeLessThan(300);
    expect(r.highest).toBeGreaterThan(300);
    // Four run ends each off by at most half a millisecond, over 13.6 s of regular steps: 4 × 0.5 ms / 13.6 s each way.
    expect(r.highest / r.lowest - 1).toBeCloseTo((2 * 4 * 0.0005) / (4094 / 300), 5);
  });

  it('quotes a rate from times held as doubles to a part in 10^9 (51200 / 3 Hz), and a round rate from times held as singles', () => {
    const times = Float64Array.from({ length: 4096 }, (_, i) => i / (51200 / 3));
    expect(Math.abs(timeRate(times).rate / (51200 / 3) - 1)).toBeLessThanOrEqual(CLOCK_DIGITS);
    // Times summed step by step in doubles, as a logger's loop makes them, carry more than their last digit's rounding.
    const summed = (step: number) => { const t = new Float64Array(4096); for (let i = 1; i < t.length; i++) t[i] = t[i - 1] + step; return t; };
    expect(timeRate(summed(0.01)).rate).toBe(100);
    expect(timeRate(summed(1 / 25600)).rate).toBe(25600);
    // Times a float holds to 2^-24 of their size (IEEE 754 binary32): the rate is quoted to what they support.
    expect(timeRate(Float64Array.from({ length: 4096 }, (_, i) => Math.fround(i / 1000))).rate).toBe(1000);
  });

  it('quotes the decimal of fewest digits within the bounds, starting from the estimate', () => {
    expect(shortestWithin(300.0004, 299.99, 300.01)).toBe(300);
    expect(shortestWithin(1021.42, 1021.4, 1021.44)).toBe(1021.4);
    expect(shortestWithin(51200 / 3, 51200 / 3, 51200 / 3)).toBe(51200 / 3);
  });

  it('refuses times too large for seconds (milliseconds since 1970), one time alone, and times that do not increase', () => {
    expect(() => nominalStep(Float64Array.from([1794794400000, 1794794400001]), 'variable "t"', 'mat.time_variable in archive.yaml')).toThrow(/variable "t" \(the time\) starts at 1794794400000, too large for seconds/);
    expect(() => nominalStep(Float64Array.from([3]), 'variable "t"', 'mat.time_variable')).toThrow(/holds one time/);
    expect(() => nominalStep(Float64Array.from([3, 2, 1]), 'variable "t"', 'mat.time_variable')).toThrow(/does not increase/);
  });
});

/** A level 4 MAT-file (little-endian doubles) of the given matrices, each rows × 1, as MathWorks' description lays it out. */
function level4(matrices: Record<string, Float64Array>): Buffer {
  return Buffer.concat(Object.entries(matrices).map(([name, values]) => {
    const head = Buffer.alloc(20);
    [0, values.length, 1, 0, name.length + 1].forEach((v, i) => head.writeInt32LE(v, 4 * i));
    return Buffer.concat([head, Buffer.from(`${name}\0`, 'latin1'), Buffer.from(values.buffer)]);
  }));
}

describe('a start from the recording\'s own times', () => {
  it('is the first time where the times are POSIX seconds, and none where they count from the capture\'s start', async () => {
    expect(startOfTimes(1794794400.5)?.toISOString()).toBe('2026-11-16T02:00:00.500Z');
    expect(startOfTimes(86400)).toBeNull();
    const dir = tempDir();
    for (const [first, start] of [[1794794400, '2026-11-16T02:00:00.000Z'], [12.5, null]] as const) {
      const path = join(dir, `t${first}.mat`);
      writeFileSync(path, level4({ x: Float64Array.from({ length: 300 }, (_, i) => Math.sin(i)), t: Float64Array.from({ length: 300 }, (_, i) => first + i / 100) }));
      const { rec } = await readAll(path, { mat: { variables: ['x'], channel_axis: null, sample_rate_variable: null, start_time_variable: null, time_variable: 't' } });
      expect([rec.startTime?.toISOString() ?? null, rec.sampleRate]).toEqual([start, 100]);
    }
    // A rate no six digits hold, from a MAT-file's time vector of doubles: kept to a part in 10^9, and the duration with it.
    const path = join(dir, 'third.mat');
    writeFileSync(path, level4({ x: new Float64Array(5000), t: Float64Array.from({ length: 5000 }, (_, i) => i / (51200 / 3)) }));
    const third = await readAll(path, { mat: { variables: ['x'], channel_axis: null, sample_rate_variable: null, start_time_variable: null, time_variable: 't' } });
    expect(Math.abs(third.rec.sampleRate / (51200 / 3) - 1)).toBeLessThanOrEqual(CLOCK_DIGITS);
    expect(third.rec.timeSteps?.irregular).toBe(0);
    // The same in a version 7.3 file's time vector read as HDF5: it starts at 0, so no start.
    const { rec } = await readAll(fixture('mat', 'dropout-73.mat'), { format: 'hdf5', hdf5: { datasets: ['/x'], channel_axis: 0, sample_rate_attribute: null, start_time_attribute: null, time_dataset: '/t' } });
    expect(rec.startTime).toBeNull();
  });
});
