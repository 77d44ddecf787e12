// Maximum transient vibration value: the largest running RMS with linear integration over τ = 1 s (ISO 2631-1:1997 §6.3.1, from memory).
import { runningMeanSquareOf } from './fused/running-mean-square.js';
import type { StageDefinition } from './stage.js';
import { noFiniteSamples } from './quality/flag.js';

export interface MtvvOptions { integration_s: number }

export const mtvv: StageDefinition<MtvvOptions> = {
  group: 'mtvv',
  section: 'mtvv',
  spectral: false,
  columns: (o) => [{ name: 'mtvv', unit: '[unit]', description: `Maximum running RMS over ${o.integration_s} s windows (ISO 2631-1 linear integration), of the signal as declared; apply any frequency weighting the standard asks for upstream.` }],
  create(ctx, o) {
    const length = Math.max(1, Math.round(o.integration_s * ctx.sampleRate));
    const running = runningMeanSquareOf(ctx, length);
    // Samples pushed, finite or not: a channel of none finite is no short one.
    let n = 0;
    return {
      push(x) { n += x.length; },
      finish() {
        const seen = running.seen;
        if (noFiniteSamples(n, seen)) ctx.note(`${ctx.name}: the channel has no finite samples (the dropout flag fails it); mtvv left empty`);
        else if (seen < length) ctx.note(`${ctx.name}: shorter than the ${o.integration_s} s MTVV integration time; mtvv left empty`);
        return { mtvv: seen >= length ? Math.sqrt(Math.max(0, running.max) / length) : null };
      },
    };
  },
};
