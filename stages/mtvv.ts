// Maximum transient vibration value: the largest running RMS with linear integration over τ = 1 s (ISO 2631-1:1997 §6.3.1, from memory).
import type { StageDefinition } from './stage.js';

export interface MtvvOptions { integration_s: number }

export const mtvv: StageDefinition<MtvvOptions> = {
  group: 'mtvv',
  columns: (o) => [{ name: 'mtvv', unit: '[unit]', description: `Maximum running RMS over ${o.integration_s} s windows (ISO 2631-1 linear integration), of the signal as declared; apply any frequency weighting the standard asks for upstream.` }],
  create(ctx, o) {
    const length = Math.max(1, Math.round(o.integration_s * ctx.sampleRate));
    const ring = new Float64Array(length);
    let seen = 0, at = 0, sum = 0, max = -1;
    return {
      push(x) {
        for (let i = 0; i < x.length; i++) {
          const sq = x[i] * x[i];
          sum += sq - ring[at];
          ring[at] = sq;
          seen++;
          if (++at === length) {
            at = 0;
            // Re-add the window exactly once per turn so rounding cannot accumulate.
            sum = 0;
            for (let j = 0; j < length; j++) sum += ring[j];
          }
          if (seen >= length && sum > max) max = sum;
        }
      },
      finish() {
        if (seen < length) ctx.note(`${ctx.name}: shorter than the ${o.integration_s} s MTVV integration time; mtvv left empty`);
        return { mtvv: seen >= length ? Math.sqrt(Math.max(0, max) / length) : null };
      },
    };
  },
};
