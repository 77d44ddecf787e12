// Band energies from the Welch spectrum: mean square and RMS in declared [low, high) bands.
import { bandMeanSquare, type WelchOptions } from './dsp/welch.js';
import { hzName } from './names.js';
import { spectrumOf } from './spectrum.js';
import type { StageDefinition } from './stage.js';

export interface BandOptions { ranges: [number, number][]; spectrum: WelchOptions }

const col = (lo: number, hi: number) => `band_${hzName(lo)}_${hzName(hi)}`;

export const bands: StageDefinition<BandOptions> = {
  group: 'bands',
  section: 'bands',
  spectral: true,
  columns: (o) => o.ranges.flatMap(([lo, hi]) => [
    { name: `${col(lo, hi)}_ms`, unit: '[unit]^2', description: `Mean square in [${lo}, ${hi}) Hz from the Welch PSD (edge bins count by the fraction inside the band).` },
    { name: `${col(lo, hi)}_rms`, unit: '[unit]', description: `RMS in [${lo}, ${hi}) Hz from the Welch PSD.` },
  ]),
  create(ctx, o) {
    const s = spectrumOf(ctx, o.spectrum);
    return {
      push() {},
      finish() {
        const psd = s.psd();
        const out: Record<string, number | null> = {};
        const above: string[] = [];
        for (const [lo, hi] of o.ranges) {
          const ok = psd && hi <= ctx.sampleRate / 2;
          if (psd && !ok) above.push(`${lo}–${hi} Hz`);
          const ms = ok ? bandMeanSquare(psd!, lo, hi) : null;
          out[`${col(lo, hi)}_ms`] = ms;
          out[`${col(lo, hi)}_rms`] = ms == null ? null : Math.sqrt(ms);
        }
        if (above.length) ctx.note(`${ctx.name}: band ${above.join(', ')} reaches above the Nyquist frequency ${ctx.sampleRate / 2} Hz; left empty (null)`);
        return out;
      },
    };
  },
};
