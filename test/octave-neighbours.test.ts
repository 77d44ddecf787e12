// A tone at a one-third-octave mid-band beside an octave band's edge, where a lab puts one: its band holds its power and the
// neighbouring bands stay 40 dB below it at every sample rate, against the whole record's Hann periodogram within ideal edges
// (scipy.signal.periodogram, test/fixtures/make-neighbour-vectors.py) and the tone's power A²/2 (Parseval, common practice).
import { describe, expect, it } from 'vitest';
import { NEIGHBOUR_BINS } from '../stages/dsp/leakage.js';
import { bandMeanSquare, Welch } from '../stages/dsp/welch.js';
import type { WindowName } from '../stages/dsp/window.js';
import { hzName } from '../stages/names.js';
import { fixture, readJson } from './helpers.js';
import { channel, reduce, sine } from './reduce-signal.js';

const ref = readJson(fixture('neighbour-vectors.json'));
const mic = channel({ name: 'mic', quantity: 'sound_pressure', unit: 'Pa', scale: 20 });
const defaultSpec = { spectrum: { segment: 4096, overlap: 0.5, window: 'hann' as const }, octave_bands: [{ fraction: 1 as const, from: 31.5, to: 8000 }, { fraction: 3 as const, from: 25, to: 10000, levels_db: true }] };
const db = (ms: number) => 10 * Math.log10(ms);

// ISO 266 label of a band from its exact mid-band frequency (the R10 number nearest it).
const R10 = [1, 1.25, 1.6, 2, 2.5, 3.15, 4, 5, 6.3, 8];
const column = (b: { fraction: number; x: number }) => {
  const third = b.fraction === 1 ? 3 * b.x : b.x;
  return `oct${b.fraction}_${hzName(Number((R10[((third % 10) + 10) % 10] * 10 ** (3 + Math.floor(third / 10))).toPrecision(3)))}_rms`;
};

describe('the room a band keeps from its neighbours\' tones (stages/dsp/leakage.ts)', () => {
  // A tone NEIGHBOUR_BINS resolution bins from an edge puts at most 1/10,000 of A²/2 past it, wherever it falls on the bin
  // grid; two thirds of that room put more (the criterion is not loose).
  it.each(['hann', 'hamming', 'boxcar'] as WindowName[])('%s: a tone NEIGHBOUR_BINS from the edge leaves at most −40 dB past it', (window) => {
    const fs = 4096, segment = 4096, bins = NEIGHBOUR_BINS[window];
    for (const offset of [0, 0.25, 0.5, 0.75]) {
      const f = 1800 + offset, welch = new Welch(fs, { segment, overlap: 0.5, window });
      welch.push(sine(segment * 4, fs, f, Math.SQRT2));
      expect(db(bandMeanSquare(welch.result()!, 0, f - bins)), `${window} at +${offset} bin`).toBeLessThan(-40);
    }
    const welch = new Welch(fs, { segment, overlap: 0.5, window });
    welch.push(sine(segment * 4, fs, 1800.5, Math.SQRT2));
    expect(db(bandMeanSquare(welch.result()!, 0, 1800.5 - (2 * bins) / 3))).toBeGreaterThan(-40);
  });
});

describe('tones beside octave band edges, default spec (segment 4096, Hann)', () => {
  for (const c of ref.cases) {
    it(`${c.frequency.toFixed(1)} Hz at ${c.fs} Hz: its bands hold its power, every other band stays 40 dB down`, async () => {
      const { row } = await reduce(sine(ref.seconds * c.fs, c.fs, c.frequency, ref.amplitude), c.fs, defaultSpec, mic);
      for (const b of c.bands.filter((b: { fraction: number; x: number }) => column(b) in row)) {
        const name = column(b), got = row[name] ** 2;
        if (b.ms > 0.5) expect(Math.abs(db(got / b.ms)), name).toBeLessThan(0.05);
        else {
          expect(db(b.ms), `${name} (reference)`).toBeLessThan(-80);
          expect(db(got), name).toBeLessThan(-40);
        }
      }
    });
  }
});
