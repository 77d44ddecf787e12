// Equivalent continuous sound levels LAeq, LCeq, LZeq. LAeq and LCeq are the mean squares of the channel's A- and
// C-weighted sound pressure (weighted-sound.ts, the filters shared with the maxima), plus the Welch spectrum weighted by
// what the digital filter misses of the analytic IEC 61672-1:2013 weighting, |W|² − |H|², a small and smooth correction;
// where no filter can be made (a sample rate of 2 kHz or less), the spectrum weighted by |W|² alone. LZeq is the variance:
// a sound pressure carries no DC (a microphone's offset is no sound), common practice. LAE, the A-weighted sound exposure
// level, is LAeq + 10·log10(T / 1 s) over the T seconds of finite samples (IEC 61672-1, ISO 1996-1): an event's whole energy.
import { magnitude, type Section } from './dsp/butterworth.js';
import { weightingGain, type Weighting } from './dsp/frequency-weighting.js';
import { bandMeanSquare, type WelchOptions } from './dsp/welch.js';
import { momentsOf } from './fused/moments.js';
import { LEVEL_UNIT, levelDb, noLevels, pascalsPer } from './sound-pressure.js';
import { spectrumOf } from './spectrum.js';
import type { StageDefinition } from './stage.js';
import { weightedSoundOf } from './weighted-sound.js';

export interface SoundEnergyOptions { spectrum: WelchOptions }

const FIGURES: [string, Weighting | null, string][] = [
  ['laeq', 'A', 'A-weighted equivalent continuous sound level over the recording: the mean square of the digital IEC 61672-1 A weighting filter\'s output, corrected through the Welch PSD for the filter\'s departure from the analytic weighting.'],
  ['lceq', 'C', 'C-weighted equivalent continuous sound level, as laeq with the C weighting.'],
  ['lzeq', null, 'Unweighted (Z) equivalent continuous sound level: from the variance of the sound pressure (its mean, no sound, left out).'],
];

/** |W(f)|² − |H(f)|²: the analytic weighting's power the digital filter misses (negative where it passes too much). */
const missedPower = (kind: Weighting, sos: Section[] | null, fs: number) =>
  (f: number) => weightingGain(kind, f) ** 2 - (sos ? magnitude(sos, f, fs) ** 2 : 0);

export const soundEnergy: StageDefinition<SoundEnergyOptions> = {
  group: 'sound_level',
  section: 'sound_level',
  spectral: true,
  columns: () => [
    ...FIGURES.map(([name, , description]) => ({ name, unit: LEVEL_UNIT, description })),
    { name: 'lae', unit: LEVEL_UNIT, description: 'A-weighted sound exposure level: laeq + 10·log10(T / 1 s), T the seconds of finite samples (IEC 61672-1), the level of one second holding all of the recording\'s A-weighted sound energy.' },
  ],
  create(ctx, o) {
    const s = spectrumOf(ctx, o.spectrum);
    const pa = pascalsPer(ctx.unit);
    const weighted = weightedSoundOf(ctx), moments = momentsOf(ctx);
    const filters = 'error' in weighted.design ? null : weighted.design;
    return {
      push() {},
      finish() {
        const out: Record<string, number | null> = { ...Object.fromEntries(FIGURES.map(([name]) => [name, null])), lae: null };
        if (pa === undefined) { if (ctx.quantity === 'sound_pressure') ctx.note(noLevels(ctx.name, ctx.unit)); return out; }
        const m = moments.moments();
        if (m.n > 0) out.lzeq = levelDb((m.m2 / m.n) * pa * pa);
        const psd = s.psd(), w = weighted.figures();
        for (const [name, kind] of FIGURES) {
          if (!kind || (!psd && !w)) continue;
          const sos = filters ? (kind === 'A' ? filters.a.sos : filters.c.sos) : null;
          const filtered = w ? (kind === 'A' ? w.meanSquareA : w.meanSquareC) : 0;
          const missed = psd ? bandMeanSquare(psd, 0, ctx.sampleRate / 2, missedPower(kind, w ? sos : null, ctx.sampleRate)) * pa * pa : 0;
          out[name] = levelDb(filtered + missed);
        }
        if (out.laeq != null && m.n > 0) out.lae = out.laeq + 10 * Math.log10(m.n / ctx.sampleRate);
        return out;
      },
    };
  },
};
