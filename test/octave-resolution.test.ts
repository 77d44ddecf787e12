// Fractional-octave bands where the shared Welch spectrum is too coarse for them (low bands at 48 kHz): held against a tone's
// known RMS (common practice: 1 Pa RMS is 93.98 dB re 20 µPa), and against scipy on the same signals
// (test/fixtures/make-octave-vectors.py: the whole record's periodogram within ideal edges, and a third-order Butterworth band
// filter of the kind IEC 61260-1 class 1 describes, from memory).
import { describe, expect, it } from 'vitest';
import { LEAKAGE_BINS } from '../stages/dsp/leakage.js';
import { bandMeanSquare, Welch } from '../stages/dsp/welch.js';
import type { WindowName } from '../stages/dsp/window.js';
import { ownSegment } from '../stages/octave.js';
import { hzName } from '../stages/names.js';
import { fixture, readJson } from './helpers.js';
import { channel, reduce, sine } from './reduce-signal.js';

const ref = readJson(fixture('octave-vectors.json'));
const FS: number = ref.fs;
const mic = channel({ name: 'mic', quantity: 'sound_pressure', unit: 'Pa', scale: 20 });
const DEFAULT_SETS = [{ fraction: 1 as const, from: 31.5, to: 8000 }, { fraction: 3 as const, from: 25, to: 10000, levels_db: true }];
const defaultSpec = { spectrum: { segment: 4096, overlap: 0.5, window: 'hann' as const }, octave_bands: DEFAULT_SETS };
const db = (ms: number) => 10 * Math.log10(ms);

// ISO 266 label of a band from its exact mid-band frequency (the R10 number nearest it, as stages/octave.ts names columns).
const R10 = [1, 1.25, 1.6, 2, 2.5, 3.15, 4, 5, 6.3, 8];
const label = (fraction: number, x: number) => {
  const third = fraction === 1 ? 3 * x : x;
  return Number((R10[((third % 10) + 10) % 10] * 10 ** (3 + Math.floor(third / 10))).toPrecision(3));
};
const column = (b: { fraction: number; x: number }) => `oct${b.fraction}_${hzName(label(b.fraction, b.x))}_rms`;

// MurmurHash3's 32-bit finaliser of i + seed, to [-0.5, 0.5), through the pink filter (scipy.signal.lfilter's transposed form).
function pink(n: number, seed: number, b: number[], a: number[]): Float64Array {
  const y = new Float64Array(n);
  let z0 = 0, z1 = 0, z2 = 0;
  for (let i = 0; i < n; i++) {
    let h = (i + seed) >>> 0;
    h ^= h >>> 16; h = Math.imul(h, 0x85ebca6b) >>> 0; h ^= h >>> 13; h = Math.imul(h, 0xc2b2ae35) >>> 0; h ^= h >>> 16;
    const x = (h >>> 0) / 4294967296 - 0.5;
    const out = b[0] * x + z0;
    z0 = b[1] * x - a[1] * out + z1;
    z1 = b[2] * x - a[2] * out + z2;
    z2 = b[3] * x - a[3] * out;
    y[i] = out;
  }
  return y;
}

describe('the resolution a band needs (stages/dsp/leakage.ts)', () => {
  // A tone LEAKAGE_BINS resolution bins above a band's lower edge keeps all but 0.05 dB of A²/2 (Parseval, common practice),
  // wherever it falls on the bin grid; half that room loses more (the criterion is not loose).
  it.each(['hann', 'hamming', 'boxcar'] as WindowName[])('%s: a tone LEAKAGE_BINS from the edge keeps its power within 0.05 dB', (window) => {
    const fs = 4096, segment = 4096;
    for (const offset of [0, 0.25, 0.5, 0.75]) {
      const f = 500 + offset, welch = new Welch(fs, { segment, overlap: 0.5, window });
      welch.push(sine(segment * 4, fs, f, Math.SQRT2));
      const psd = welch.result()!;
      const kept = bandMeanSquare(psd, f - LEAKAGE_BINS[window], f + 200);
      expect(db(kept), `${window} at +${offset} bin`).toBeGreaterThan(-0.05);
      expect(db(kept)).toBeLessThan(0.01);
    }
    const welch = new Welch(fs, { segment, overlap: 0.5, window });
    welch.push(sine(segment * 4, fs, 500.5, Math.SQRT2));
    expect(db(bandMeanSquare(welch.result()!, 500.5 - LEAKAGE_BINS[window] / 2, 700))).toBeLessThan(-0.05);
  });

  it('the default sets take a spectrum of their own where the segment of 4096 is too coarse: 65,536 points at 48 kHz, fewer at lower rates; none where the segment resolves every band', () => {
    const welch = { segment: 4096, overlap: 0.5, window: 'hann' as const };
    expect(ownSegment(DEFAULT_SETS, welch, 48000)).toBe(65536);
    expect(ownSegment(DEFAULT_SETS, welch, 25600)).toBe(65536);
    expect(ownSegment(DEFAULT_SETS, welch, 12800)).toBe(32768);
    expect(ownSegment(DEFAULT_SETS, { ...welch, segment: 65536 }, 48000)).toBeNull();
    expect(ownSegment([{ fraction: 3, from: 800, to: 1250 }], { ...welch, segment: 8192 }, 25600)).toBeNull();
  });
});

describe('low fractional-octave bands of a sound-pressure channel at 48 kHz, default spec (segment 4096, Hann)', () => {
  for (const tone of ref.tones) {
    it(`a 1 Pa tone at ${tone.frequency.toFixed(2)} Hz: its band holds its power; the neighbours no more than a band filter lets through`, async () => {
      const { row, result } = await reduce(sine(tone.seconds * FS, FS, tone.frequency, tone.amplitude), FS, defaultSpec, mic);
      expect(result.messages.join('\n')).not.toMatch(/too narrow/);
      for (const b of tone.bands.filter((b: { fraction: number; x: number }) => column(b) in row)) {
        const got = row[column(b)] ** 2, name = column(b);
        expect(got, name).toEqual(expect.any(Number));
        if (b.ideal_ms > 0.01) {
          // The tone's band (or, on an edge, the two bands together, below): the ideal periodogram's mean square within 0.05 dB.
          if (b.ideal_ms > 0.99) expect(Math.abs(db(got / b.ideal_ms)), name).toBeLessThan(0.05);
        } else {
          // Leakage into a neighbour: no more than scipy's third-order Butterworth band filter passes (+0.5 dB).
          expect(db(got), name).toBeLessThan(db(b.filter_ms) + 0.5);
        }
      }
      // Every one-third-octave band together: the tone's mean square within 0.05 dB (Parseval).
      const thirds = tone.bands.filter((b: { fraction: number; x: number }) => b.fraction === 3 && column(b) in row).reduce((s: number, b: { fraction: number; x: number }) => s + row[column(b)] ** 2, 0);
      expect(Math.abs(db(thirds))).toBeLessThan(0.05);
    });
  }

  it('a 94 dB tone at 31.5 Hz reads 94 dB in its one-third-octave band and its octave band, and at most what a band filter passes at 25 and 40 Hz', async () => {
    const tone = ref.tones.find((t: { frequency: number }) => t.frequency === 31.5);
    const { row } = await reduce(sine(10 * FS, FS, 31.5, Math.SQRT2), FS, defaultSpec, mic);
    expect(row.oct3_31p5_db).toBeCloseTo(93.98, 1);
    expect(row.oct1_31p5_rms).toBeCloseTo(1, 3);
    const filter = (x: number) => 10 * Math.log10(tone.bands.find((b: { fraction: number; x: number }) => b.fraction === 3 && b.x === x).filter_ms / 4e-10);
    expect(row.oct3_25_db).toBeLessThan(filter(-16) + 0.5); // about 76 dB through the filter
    expect(row.oct3_40_db).toBeLessThan(filter(-14) + 0.5);
  });

  it('pink noise: every band within 0.3 dB (0.05 dB from 160 Hz) of the whole record\'s periodogram and within 0.5 dB of the band filter, 25 Hz to 10 kHz', async () => {
    const p = ref.pink;
    const x = pink(p.seconds * FS, p.seed, p.b, p.a);
    for (let i = 0; i < 4; i++) {
      expect(x[i]).toBeCloseTo(p.first[i], 12);
      expect(x[x.length - 4 + i]).toBeCloseTo(p.last[i], 12);
    }
    const { row } = await reduce(x, FS, defaultSpec, mic);
    for (const b of p.bands) {
      const got = row[column(b)] ** 2;
      // Welch's time weighting (Hann segments overlapping by half) against the whole record's even one: a random spread that
      // shrinks as bandwidth × duration grows (scipy.signal.welch with nperseg=65536 spreads as much: +0.26 dB at 31.5 Hz,
      // −0.46 dB at 40 Hz); 0.3 dB where B·T < 1000, 0.05 dB above. The segment of 4096 read +1.35 dB at 25 Hz.
      const bt = (b.mid * (10 ** (0.15 / b.fraction) - 10 ** (-0.15 / b.fraction))) * p.seconds;
      expect(Math.abs(db(got / b.ideal_ms)), column(b)).toBeLessThan(bt < 1000 ? 0.3 : 0.05);
      // The filter's skirts pass some 0.2 dB more of a smooth spectrum than ideal edges.
      expect(Math.abs(db(got / b.filter_ms)), column(b)).toBeLessThan(0.5);
    }
  });
});

describe('bands no spectrum of the recording resolves', () => {
  it('a 0.5 s recording at 48 kHz: the one-third-octave bands up to 63 Hz and the octave bands up to 63 Hz are null, with one note naming them and the gap-free length they need; the others read the tone', async () => {
    const { row, result } = await reduce(sine(FS / 2, FS, 1000, Math.SQRT2), FS, defaultSpec, mic);
    for (const nominal of ['25', '31p5', '40', '50', '63']) {
      expect(row[`oct3_${nominal}_rms`], nominal).toBeNull();
      expect(row[`oct3_${nominal}_db`], nominal).toBeNull();
    }
    expect(row.oct3_80_rms).toEqual(expect.any(Number));
    // A 25 Hz tone inside octave 31.5 would lose power at 2 Hz, a 20 Hz or 40 Hz tone leak into octaves 31.5 and 63.
    expect(row.oct1_31p5_rms).toBeNull();
    expect(row.oct1_63_rms).toBeNull();
    expect(row.oct1_125_rms).toEqual(expect.any(Number));
    // 0.5 s of a whole number of cycles: the 1 kHz band holds A²/2 (Parseval, common practice).
    expect(row.oct3_1000_db).toBeCloseTo(93.98, 1);
    const notes = result.messages.filter((m) => /too narrow/.test(m));
    expect(notes).toEqual(['mic: 7 fractional-octave bands (one-third-octave 25, 31.5, 40, 50, 63 Hz; octave 31.5, 63 Hz) are too narrow for the spectrum\'s resolution (periodograms of 24000 samples, 2.00 Hz): a tone in them would leak past their edges, or one beside them into them; left empty (null); they need gap-free stretches of at least 63328 samples (1.32 s of recording; after a gap, up to 608 more while the low-pass filter settles)']);
    // The finer spectrum's own note on the short recording is left to this one; the shared spectrum's stays.
    expect(result.messages.join('\n')).not.toMatch(/65536-sample spectrum segment/);
  });

  it.each([48000, 12800])('at %i Hz, the length the note names is enough: a recording that long reads the named bands, a tone at 25 Hz within 0.05 dB of A²/2; one shorter leaves them null', async (fs) => {
    // 25.12 Hz, the exact one-third-octave mid-band (IEC 61260-1 base 10); its power A²/2 by Parseval (common practice).
    const f = 1000 * 10 ** (-1.6);
    const short = await reduce(sine(fs / 2, fs, f, Math.SQRT2), fs, defaultSpec, mic);
    const note = short.result.messages.find((m) => /too narrow/.test(m))!;
    const needed = Number(/at least (\d+) samples/.exec(note)![1]);
    // Shorter than the power-of-two periodogram the bands' spectrum takes, which a stretch shorter than it need not fill.
    expect(needed).toBeLessThan(fs === 48000 ? 65536 : 32768);
    const enough = await reduce(sine(needed, fs, f, Math.SQRT2), fs, defaultSpec, mic);
    expect(enough.result.messages.join('\n')).not.toMatch(/too narrow/);
    expect(Math.abs(db(enough.row.oct3_25_rms ** 2))).toBeLessThan(0.05);
    expect(Math.abs(db(enough.row.oct1_31p5_rms ** 2))).toBeLessThan(0.05);
    const less = await reduce(sine(needed - 64, fs, f, Math.SQRT2), fs, defaultSpec, mic);
    expect(less.row.oct3_25_rms).toBeNull();
    expect(less.result.messages.find((m) => /too narrow/.test(m))).toMatch(`at least ${needed} samples`);
    // After a gap of 50 samples, the stretch that follows needs the settling the note names on top.
    const settle = Number(/after a gap, up to (\d+) more/.exec(note)![1]);
    const gapped = sine(3050 + needed + settle, fs, f, Math.SQRT2).fill(Number.NaN, 3000, 3050);
    expect(Math.abs(db((await reduce(gapped, fs, defaultSpec, mic)).row.oct3_25_rms ** 2))).toBeLessThan(0.05);
  });

  it('a declared segment that resolves every band is taken alone: the same low bands, within 0.001 dB, as the decimated spectrum the stage would take itself', async () => {
    const x = sine(4 * FS, FS, 31.5, Math.SQRT2);
    const own = await reduce(x, FS, defaultSpec, mic);
    const declared = await reduce(x, FS, { ...defaultSpec, spectrum: { ...defaultSpec.spectrum, segment: 65536 } }, mic);
    // The same periodogram spans (65,536 samples at 48 kHz, 4096 at 3 kHz); the leakage bands sit 40 to 80 dB down.
    for (const c of ['oct3_25_rms', 'oct3_31p5_rms', 'oct3_40_rms', 'oct1_31p5_rms']) expect(Math.abs(db(declared.row[c] ** 2 / own.row[c] ** 2)), c).toBeLessThan(0.001);
  });
});
