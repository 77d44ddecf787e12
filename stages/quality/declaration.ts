// Declaration: the channel against what archive.yaml says of it (declared at all, expected duration).
import type { StageDefinition } from '../stage.js';
import { pct, secs, type QualityThresholds, type Severity } from './flag.js';

export const declaration: StageDefinition<QualityThresholds> = {
  group: 'quality',
  columns: () => [],
  create(ctx, q) {
    let n = 0;
    return {
      push(x) { n += x.length; },
      finish() {
        const issues: string[] = [];
        const duration = n / ctx.sampleRate;
        const want = ctx.declaredDurationS;
        if (!ctx.declared) issues.push('the channel is not declared in archive.yaml, so its values are in stored units (no scale, range or unit)');
        if (want != null && Math.abs(duration - want) > q.declaration.duration_tolerance * want) issues.push(`the recording lasts ${secs(duration)} but ${secs(want)} is declared`);
        const severity: Severity = issues.length ? 'warn' : 'ok';
        ctx.flag({
          name: 'declaration', severity, value: duration,
          threshold: `warn: channel undeclared, or duration off the declared one by more than ${pct(q.declaration.duration_tolerance)}`,
          evidence: { duration_s: duration, declared_duration_s: want },
          message: issues.length ? `${issues.join('; ')}: correct archive.yaml or the capture` : 'as declared',
        });
        return {};
      },
    };
  },
};
