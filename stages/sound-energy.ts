// Equivalent continuous sound levels LAeq, LCeq, LZeq: the A, C or no weighting of IEC 61672-1:2013 (analytic form) applied
// to the channel's Welch spectrum, summed over 0 Hz to Nyquist (the mean is removed per segment: a microphone's offset is no sound).
import { weightingGain, type Weighting } from './dsp/frequency-weighting.js';
import { bandMeanSquare, type WelchOptions } from './dsp/welch.js';
import { LEVEL_UNIT, levelDb, noLevels, pascalsPer } from './sound-pressure.js';
import { spectrumOf } from './spectrum.js';
import type { StageDefinition } from './stage.js';

export interface SoundEnergyOptions { spectrum: WelchOptions }

const FIGURES: [string, Weighting | null, string][] = [
  ['laeq', 'A', 'A-weighted equivalent continuous sound level over the recording: the IEC 61672-1 A weighting (analytic) applied to the Welch PSD, summed to Nyquist.'],
  ['lceq', 'C', 'C-weighted equivalent continuous sound level, as laeq with the C weighting.'],
  ['lzeq', null, 'Unweighted (Z) equivalent continuous sound level: the Welch PSD summed to Nyquist.'],
];

export const soundEnergy: StageDefinition<SoundEnergyOptions> = {
  group: 'sound_level',
  columns: () => FIGURES.map(([name, , description]) => ({ name, unit: LEVEL_UNIT, description })),
  create(ctx, o) {
    const s = spectrumOf(ctx, o.spectrum);
    const pa = pascalsPer(ctx.unit);
    return {
      push() {},
      finish() {
        const out: Record<string, number | null> = Object.fromEntries(FIGURES.map(([name]) => [name, null]));
        if (pa === undefined) { if (ctx.quantity === 'sound_pressure') ctx.note(noLevels(ctx.name, ctx.unit)); return out; }
        const psd = s.psd();
        if (!psd) return out;
        for (const [name, kind] of FIGURES) {
          const power = kind ? (f: number) => weightingGain(kind, f) ** 2 : undefined;
          out[name] = levelDb(bandMeanSquare(psd, 0, ctx.sampleRate / 2, power) * pa * pa);
        }
        return out;
      },
    };
  },
};
