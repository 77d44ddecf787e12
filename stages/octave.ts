// Fractional-octave band RMS from the Welch spectrum, with the base-10 mid-band frequencies and edges of IEC 61260-1:2014.
import { LONGEST_SEGMENT, resolutionNeeded, resolvesBand, segmentKeeping, type BandRoom } from './dsp/leakage.js';
import { decimatedSpan, lastHalving, settlingOutputs } from './dsp/decimate.js';
import { bandMeanSquare, resolutionOf, type Psd, type WelchOptions } from './dsp/welch.js';
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

/**
 * A band's room (stages/dsp/leakage.ts), on its lower side (the upper side has more, the bands being geometric). `keep`: from
 * the lower edge to the nearer of the middle half's lower end, fm·G^(−1/(4b)), and the lowest one-third-octave mid-band
 * inside it (fm·G^(−1/3) for an octave band; our choice: a tone anywhere in the middle half, or where a lab puts one, keeps
 * its power). `shut`: from the highest one-third-octave mid-band below the band (fm·G^(−2/3), fm·G^(−1/3)) to the lower edge,
 * so that a tone in the neighbouring band stays out of this one.
 */
export function bandRoom(mid: number, b: 1 | 3): BandRoom {
  const lower = mid * G ** (-1 / (2 * b)), inside = b === 1 ? -1 : 0;
  return { keep: Math.min(mid * G ** (-1 / (4 * b)), mid * G ** (inside / 3)) - lower, shut: lower - mid * G ** ((inside - 1) / 3) };
}

/** The sets' bands below the Nyquist frequency, each with its fraction and room. */
function bandsBelow(sets: OctaveOptions['sets'], fs: number) {
  return sets.flatMap((set) => bandsOf(set.fraction, set.from, set.to).filter((band) => band.upper <= fs / 2).map((band) => ({ ...band, fraction: set.fraction, room: bandRoom(band.mid, set.fraction) })));
}

/**
 * The periodogram length the octave stage takes of its own for the bands the spectrum's segment cannot resolve (the
 * narrowest sets it), or null when the segment resolves every band below Nyquist.
 */
export function ownSegment(sets: OctaveOptions['sets'], spectrum: WelchOptions, fs: number): number | null {
  const low = lowBands(sets, spectrum, fs);
  return low.length ? Math.min(Math.max(...low.map((b) => segmentKeeping(b.room, fs, spectrum.window))), LONGEST_SEGMENT) : null;
}

/** The bands below Nyquist the spectrum's segment cannot resolve. */
const lowBands = (sets: OctaveOptions['sets'], spectrum: WelchOptions, fs: number) =>
  bandsBelow(sets, fs).filter((band) => !resolvesBand(band.room, fs / spectrum.segment, spectrum.window));

/**
 * The finer spectrum the octave stage asks for: periodograms spanning `ownSegment` samples of the recording, taken at
 * fs/D from every D-th sample of the low-passed channel (`decimatedSpectrum` in spectrum.ts) with a segment of
 * ownSegment/D. D is the largest power of two up to ownSegment/segment that keeps the highest band it serves below
 * fs/(6D), where the decimator is flat and free of aliases (stages/dsp/decimate.ts); D = 1 is a Welch spectrum at fs.
 * Null when the segment resolves every band.
 */
export function lowBandSpectrum(sets: OctaveOptions['sets'], spectrum: WelchOptions, fs: number): { segment: number; decimation: number } | null {
  const n = ownSegment(sets, spectrum, fs);
  if (n === null || n <= spectrum.segment) return null;
  return decimatedSpan(n, spectrum.segment, Math.max(...lowBands(sets, spectrum, fs).map((b) => b.upper)), fs);
}

/** The band names of a note: "one-third-octave 25, 31.5 Hz; octave 31.5 Hz". */
function bandList(bands: { fraction: 1 | 3; nominal: number }[]): string {
  return ([3, 1] as const).map((b) => [b, bands.filter((band) => band.fraction === b).map((band) => band.nominal)] as const)
    .filter(([, nominal]) => nominal.length).map(([b, nominal]) => `${b === 1 ? 'octave' : 'one-third-octave'} ${nominal.join(', ')} Hz`).join('; ');
}

export const octaveBands: StageDefinition<OctaveOptions> = {
  group: 'octave_bands',
  section: 'octave_bands',
  spectral: true,
  columns: (o) => o.sets.flatMap((set): ColumnSpec[] => {
    const bands = bandsOf(set.fraction, set.from, set.to);
    const kind = set.fraction === 1 ? 'octave' : 'one-third-octave';
    return [
      ...bands.map((band) => ({
        name: col(set.fraction, band.nominal), unit: '[unit]',
        description: `RMS in the ${kind} band ${band.nominal} Hz (exact edges ${band.lower.toFixed(2)}–${band.upper.toFixed(2)} Hz, IEC 61260-1 base 10), from the Welch PSD with ideal band edges (a finer one of its own where the spectrum's segment cannot resolve the band; null where the recording is too short for any).`,
      })),
      ...(set.levels_db ? bands.map((band) => ({ name: col(set.fraction, band.nominal, 'db'), unit: LEVEL_UNIT, description: `Sound pressure level in the ${kind} band ${band.nominal} Hz, from its RMS; sound-pressure channels in Pa (or mPa, µPa, hPa, kPa) only, null for others.` })) : []),
    ];
  }),
  create(ctx, o) {
    const s = spectrumOf(ctx, o.spectrum);
    // Bands the shared segment cannot resolve take a finer spectrum of their own (shared with any stage asking the same).
    const low = lowBandSpectrum(o.sets, o.spectrum, ctx.sampleRate);
    const fine = low ? spectrumOf(ctx, { ...o.spectrum, segment: low.segment }, false, low.decimation) : null;
    // Levels only for sound pressure: dB re 20 µPa means nothing for a hydraulic pressure.
    const pa = ctx.quantity === 'sound_pressure' ? pascalsPer(ctx.unit) : undefined;
    return {
      push() {},
      finish() {
        const fs = ctx.sampleRate, win = o.spectrum.window;
        const psd = s.psd(), finer = fine?.psd() ?? null;
        // The first spectrum that resolves the band, its tones keeping their power and its neighbours' staying out
        // (stages/dsp/leakage.ts), and that may be read up to its upper edge.
        const resolving = (room: BandRoom, upper: number): Psd | null =>
          [psd, finer].find((p) => p && resolvesBand(room, resolutionOf(p), win) && upper <= (p.upTo ?? Infinity)) ?? null;
        const out: Record<string, number | null> = {};
        const above: number[] = [];
        const unresolved: { fraction: 1 | 3; nominal: number; room: BandRoom }[] = [];
        for (const set of o.sets) {
          for (const band of bandsOf(set.fraction, set.from, set.to)) {
            const inside = band.upper <= fs / 2;
            if (psd && !inside) above.push(band.nominal);
            const room = bandRoom(band.mid, set.fraction);
            const from = psd && inside ? resolving(room, band.upper) : null;
            if (psd && inside && !from) unresolved.push({ fraction: set.fraction, nominal: band.nominal, room });
            const ms = from ? bandMeanSquare(from, band.lower, band.upper) : null;
            out[col(set.fraction, band.nominal)] = ms == null ? null : Math.sqrt(ms);
            if (set.levels_db) out[col(set.fraction, band.nominal, 'db')] = ms == null || pa === undefined ? null : levelDb(ms * pa * pa);
          }
        }
        if (above.length) ctx.note(`${ctx.name}: ${above.length} fractional-octave bands (${Math.min(...above)} Hz and up) reach above the Nyquist frequency ${fs / 2} Hz; left empty (null)`);
        // The finest resolution reached, as the recording's samples one periodogram spans.
        if (unresolved.length) ctx.note(unresolvedNote(ctx.name, unresolved, Math.round(fs / Math.min(...[psd!, finer].filter((p) => p).map((p) => resolutionOf(p!)))), fs, win, low?.decimation ?? 1));
        return out;
      },
    };
  },
};

/**
 * Which bands the spectrum could not resolve, what it spanned, and the least gap-free recording that would resolve them: a
 * stretch shorter than a segment is one periodogram of its own length (taken from every D-th sample), so it needs only the
 * resolution the bands ask for, not the power-of-two segment.
 */
function unresolvedNote(name: string, bands: { fraction: 1 | 3; nominal: number; room: BandRoom }[], spanned: number, fs: number, win: WelchOptions['window'], decimation: number): string {
  const needed = decimation * Math.ceil(fs / (decimation * Math.min(...bands.map((b) => resolutionNeeded(b.room, win)))));
  // After a gap the decimated stream waits for the filter's settling, counted from the output at or after the gap's last sample.
  const what = needed > LONGEST_SEGMENT ? `a periodogram longer than the longest segment quern takes (${LONGEST_SEGMENT} samples)` : `gap-free stretches of at least ${needed} samples (${Number((needed / fs).toPrecision(3))} s of recording${decimation > 1 ? `; after a gap, up to ${decimation * (settlingOutputs(lastHalving(fs, decimation)) + 2)} more while the low-pass filter settles` : ''})`;
  return `${name}: ${bands.length} fractional-octave bands (${bandList(bands)}) are too narrow for the spectrum's resolution (periodograms of ${spanned} samples, ${(fs / spanned).toPrecision(3)} Hz): a tone in them would leak past their edges, or one beside them into them; left empty (null); they need ${what}`;
}
