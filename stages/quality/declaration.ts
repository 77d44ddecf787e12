// Declaration: the recording against what archive.yaml says of it (expected duration); sample rate and channel count
// mismatches fail the whole recording before any stage runs (pipeline/reduce.ts).
import type { StageDefinition } from '../stage.js';
import { pct, secs, type QualityThresholds, type Severity } from './flag.js';

export const declaration: StageDefinition<QualityThresholds> = {
  group: 'quality',
  section: null,
  spectral: false,
  columns: () => [],
  create(ctx, q) {
    let n = 0;
    return {
      push(x) { n += x.length; },
      finish() {
        const issues: string[] = [];
        const duration = n / ctx.sampleRate;
        const want = ctx.declaredDurationS;
        if (want != null && Math.abs(duration - want) > q.declaration.duration_tolerance * want) issues.push(`the recording lasts ${secs(duration)} but ${secs(want)} is declared`);
        const severity: Severity = issues.length ? 'note' : 'ok';
        // A group may leave its channels undeclared on purpose; that is said, not flagged.
        const undeclared = ctx.declared ? '' : '; channel not declared in archive.yaml, so its values are in stored units (no scale, range or unit)';
        ctx.flag({
          name: 'declaration', severity, value: duration,
          threshold: `note: duration off the declared one by more than ${pct(q.declaration.duration_tolerance)}`,
          evidence: { duration_s: duration, declared_duration_s: want },
          message: (issues.length ? `${issues.join('; ')}: the figures describe what was captured; correct archive.yaml or check the capture` : 'as declared') + undeclared,
        });
        return {};
      },
    };
  },
};
