// A recording's own times (a CSV time column, an HDF5 or MAT-file time vector) against their nominal step: the trimmed mean
// of the steps near their median (common practice), checked here against the plain formulas on planted times.
import { describe, expect, it } from 'vitest';
import { nominalOf, nominalStep, stepCounter } from '../stages/read/time-steps.js';

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

  it('refuses times too large for seconds (milliseconds since 1970), one time alone, and times that do not increase', () => {
    expect(() => nominalStep(Float64Array.from([1794794400000, 1794794400001]), 'variable "t"', 'mat.time_variable in archive.yaml')).toThrow(/variable "t" \(the time\) starts at 1794794400000, too large for seconds/);
    expect(() => nominalStep(Float64Array.from([3]), 'variable "t"', 'mat.time_variable')).toThrow(/holds one time/);
    expect(() => nominalStep(Float64Array.from([3, 2, 1]), 'variable "t"', 'mat.time_variable')).toThrow(/does not increase/);
  });
});
