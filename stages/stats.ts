// Statistics of the signal: moments, extremes, RMS and crest factor in one streaming pass.
import type { StageDefinition } from './stage.js';
import { describe } from './dsp/moments.js';
import { momentsOf } from './fused/moments.js';

export { momentsOf };

export const statistics: StageDefinition<Record<string, never>> = {
  group: 'statistics',
  section: 'statistics',
  spectral: false,
  columns: () => [
    { name: 'mean', unit: '[unit]', description: 'Arithmetic mean.' },
    { name: 'std', unit: '[unit]', description: 'Population standard deviation (divisor n).' },
    { name: 'rms', unit: '[unit]', description: 'Root mean square, sqrt(mean² + std²).' },
    { name: 'min', unit: '[unit]', description: 'Smallest sample.' },
    { name: 'max', unit: '[unit]', description: 'Largest sample.' },
    { name: 'peak', unit: '[unit]', description: 'Largest absolute sample.' },
    { name: 'peak_to_peak', unit: '[unit]', description: 'max − min.' },
    { name: 'crest_factor', unit: '1', description: 'peak / rms.' },
    { name: 'skewness', unit: '1', description: 'Third standardised moment (population).' },
    { name: 'kurtosis', unit: '1', description: "Pearson's kurtosis, fourth standardised moment: 3 for a Gaussian." },
    { name: 'n_nonfinite', unit: '1', description: 'Samples that were missing or not finite, left out of the statistics.' },
  ],
  create(ctx) {
    const m = momentsOf(ctx);
    return {
      push() {},
      finish() { const acc = m.moments(); return { ...describe(acc), n_nonfinite: acc.nonFinite }; },
    };
  },
};
