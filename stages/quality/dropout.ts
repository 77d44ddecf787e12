// Dropout: missing values, stretches of exact zeros, gaps in a time column.
import type { StageDefinition } from '../stage.js';
import { missingOf } from '../fused/missing.js';
import { zeroRunsOf } from '../fused/zero-runs.js';
import { pct, secs, type QualityThresholds, type Severity } from './flag.js';

export const dropout: StageDefinition<QualityThresholds> = {
  group: 'quality',
  columns: () => [
    { name: 'missing_fraction', unit: '1', description: 'Fraction of samples missing or not finite.' },
    { name: 'zero_run_s', unit: 's', description: 'Longest stretch of exact zeros.' },
  ],
  create(ctx, q) {
    const gaps = missingOf(ctx), zeros = zeroRunsOf(ctx);
    let n = 0;
    return {
      push(x) { n += x.length; },
      finish() {
        const missing = gaps.count, firstMissing = gaps.first, longest = zeros.longest, longestEnd = zeros.longestEnd;
        const fs = ctx.sampleRate, d = q.dropout;
        const fraction = n ? missing / n : 0;
        const zeroS = longest / fs;
        const steps = ctx.timeSteps();
        const problems: string[] = [];
        let severity: Severity = 'ok';
        if (missing > 0) {
          problems.push(`${missing} samples missing (${pct(fraction)}), first at ${secs(firstMissing / fs)}`);
          severity = fraction >= d.fail_missing_fraction ? 'fail' : fraction >= d.warn_missing_fraction ? 'warn' : 'note';
        }
        // A tacho channel from a digital input rests at exactly zero between pulses: there, zeros are the signal.
        if (zeroS >= d.warn_zero_run_s && !ctx.tacho) {
          problems.push(`exact zeros for ${secs(zeroS)} ending at ${secs((longestEnd + 1) / fs)}`);
          if (severity === 'ok' || severity === 'note') severity = 'warn';
        }
        if (steps && steps.irregular > 0) {
          problems.push(`${steps.irregular} irregular time steps, the widest ${secs(steps.widest_s)} (nominal ${secs(steps.nominal_s)}) ending at t = ${secs(steps.widest_at_s)}`);
          if (severity === 'ok' || severity === 'note') severity = 'warn';
        }
        ctx.flag({
          name: 'dropout', severity, value: fraction,
          threshold: `note: any missing sample; warn: ≥ ${pct(d.warn_missing_fraction)} missing, zeros for ≥ ${secs(d.warn_zero_run_s)} (not on a tacho channel), or an irregular time step; fail: ≥ ${pct(d.fail_missing_fraction)} missing`,
          evidence: { missing, first_missing_s: firstMissing >= 0 ? firstMissing / fs : null, zero_run_s: zeroS, irregular_steps: steps?.irregular ?? null },
          message: problems.length
            ? `${problems.join('; ')}: ${severity === 'note' ? 'the figures cover the rest and move by less than the missing share' : 'the logger lost data: RMS, peak and the window figures cover only what is left (zeros pull them down; uneven steps distort the spectrum)'}`
            : 'no missing samples, zero stretches or time gaps',
        });
        return { missing_fraction: fraction, zero_run_s: zeroS };
      },
    };
  },
};
