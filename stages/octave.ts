// Fractional-octave band RMS from the Welch spectrum, with the base-10 mid-band frequencies and edges of IEC 61260-1:2014.
import { bandMeanSquare, type WelchOptions } from './dsp/welch.js';
import { hzName } from './names.js';
import { LEVEL_UNIT, levelDb, pascalsPer } from './sound-pressure.js';
import { spectrumOf } from './spectrum.js';
import type { ColumnSpec, StageDefinition } from './stage.js';

export interface OctaveOptions { sets: { fraction: 1 | 3; from: number; to: number; levels_db?: boolean }[]; spectrum: WelchOptions }

/** Octave ratio G = 10^(3/10), base-10 system (IEC 61260-1 §5.2). */
export const G = 10 ** (3 / 10);

// IEC 61260-1 §5.4-5.6: exact mid-band fm = 1000·G^(x/b) for odd b (1000·G^((2x+1)/(2b)) for even b), edges fm·G^(∓1/(2b)).
export function exactBand(x: number, b: number): { mid: number; lower: number; upper: number } {
  const mid = b % 2 ? 1000 * G ** (x / b) : 1000 * G ** ((2 * x + 1) / (2 * b));
  return { mid, lower: mid * G ** (-1 / (2 * b)), upper: mid * G ** (1 / (2 * b)) };
}

const R10 = [1, 1.25, 1.6, 2, 2.5, 3.15, 4, 5, 6.3, 8]; // ISO 266 preferred numbers (R10 series, rounded as for band labels)

/** Nominal label of an octave or one-third-octave band (ISO 266): the R10 number nearest the exact mid-band frequency. */
export function nominalFrequency(x: number, b: 1 | 3): number {
  const third = b === 1 ? 3 * x : x; // octave x is one-third-octave 3x
  const idx = ((third % 10) + 10) % 10;
  const value = R10[idx] * 10 ** (3 + Math.floor(third / 10));
  return Number(value.toPrecision(3));
}

/** The bands of a set whose nominal frequencies lie in [from, to]. */
export function bandsOf(fraction: 1 | 3, from: number, to: number) {
  const out: { x: number; nominal: number; mid: number; lower: number; upper: number }[] = [];
  for (let x = -60; x <= 30; x++) {
    const nominal = nominalFrequency(x, fraction);
    if (nominal >= from * 0.999 && nominal <= to * 1.001) out.push({ x, nominal, ...exactBand(x, fraction) });
  }
  return out;
}

const col = (b: number, nominal: number, what: 'rms' | 'db' = 'rms') => `oct${b}_${hzName(nominal)}_${what}`;

export const octaveBands: StageDefinition<OctaveOptions> = {
  group: 'octave_bands',
  columns: (o) => o.sets.flatMap((set): ColumnSpec[] => {
    const bands = bandsOf(set.fraction, set.from, set.to);
    const kind = set.fraction === 1 ? 'octave' : 'one-third-octave';
    return [
      ...bands.map((band) => ({
        name: col(set.fraction, band.nominal), unit: '[unit]',
        description: `RMS in the ${kind} band ${band.nominal} Hz (exact edges ${band.lower.toFixed(2)}–${band.upper.toFixed(2)} Hz, IEC 61260-1 base 10), from the Welch PSD with ideal band edges.`,
      })),
      ...(set.levels_db ? bands.map((band) => ({ name: col(set.fraction, band.nominal, 'db'), unit: LEVEL_UNIT, description: `Sound pressure level in the ${kind} band ${band.nominal} Hz, from its RMS; sound-pressure channels in Pa (or mPa, µPa, hPa, kPa) only, null for others.` })) : []),
    ];
  }),
  create(ctx, o) {
    const s = spectrumOf(ctx, o.spectrum);
    // Levels only for sound pressure: dB re 20 µPa means nothing for a hydraulic pressure.
    const pa = ctx.quantity === 'sound_pressure' ? pascalsPer(ctx.unit) : undefined;
    return {
      push() {},
      finish() {
        const psd = s.psd();
        const out: Record<string, number | null> = {};
        const above: number[] = [];
        for (const set of o.sets) {
          for (const band of bandsOf(set.fraction, set.from, set.to)) {
            const ok = psd && band.upper <= ctx.sampleRate / 2;
            if (psd && !ok) above.push(band.nominal);
            const ms = ok ? bandMeanSquare(psd!, band.lower, band.upper) : null;
            out[col(set.fraction, band.nominal)] = ms == null ? null : Math.sqrt(ms);
            if (set.levels_db) out[col(set.fraction, band.nominal, 'db')] = ms == null || pa === undefined ? null : levelDb(ms * pa * pa);
          }
        }
        if (above.length) ctx.note(`${ctx.name}: ${above.length} fractional-octave bands (${Math.min(...above)} Hz and up) reach above the Nyquist frequency ${ctx.sampleRate / 2} Hz; left empty (null)`);
        return out;
      },
    };
  },
};
