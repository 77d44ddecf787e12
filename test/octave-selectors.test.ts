// Octave sets listed with their own `only:` selectors: each set is computed on exactly the channels its own selector chooses
// (a set without one on every channel), and its bands hold what the whole record's Hann periodogram puts within ideal IEC
// 61260-1 edges (scipy.signal.periodogram, test/fixtures/make-neighbour-vectors.py), a 1 Pa RMS tone reading 93.98 dB re
// 20 µPa (common practice).
import { describe, expect, it } from 'vitest';
import { activeStages, featureColumns } from '../stages/index.js';
import { octaveBands } from '../stages/octave.js';
import { hzName } from '../stages/names.js';
import type { ReductionSpec } from '../spec/reduction.js';
import { fixture, readJson } from './helpers.js';
import { channel, reduceChannels, sine } from './reduce-signal.js';

const ref = readJson(fixture('neighbour-vectors.json'));
const acc = channel({ name: 'acc', quantity: 'acceleration', unit: 'm/s^2', scale: 20 });
const mic = channel({ name: 'mic', quantity: 'sound_pressure', unit: 'Pa', scale: 20 });
const spectrum = { segment: 4096, overlap: 0.5, window: 'hann' as const };
const db = (ms: number) => 10 * Math.log10(ms);

// ISO 266 label of a band from its exact mid-band frequency (the R10 number nearest it), as the reference script numbers bands.
const R10 = [1, 1.25, 1.6, 2, 2.5, 3.15, 4, 5, 6.3, 8];
const column = (b: { fraction: number; x: number }, what = 'rms') => {
  const third = b.fraction === 1 ? 3 * b.x : b.x;
  return `oct${b.fraction}_${hzName(Number((R10[((third % 10) + 10) % 10] * 10 ** (3 + Math.floor(third / 10))).toPrecision(3)))}_${what}`;
};

/** The two tones at 8 kHz beside the octave edge at 44.7 Hz: 39.8 Hz on acc, 50.1 Hz on mic. */
const cases = ref.cases.filter((c: { fs: number }) => c.fs === 8000);
const [accCase, micCase] = [cases.find((c: { frequency: number }) => Math.abs(c.frequency - 39.8) < 0.1), cases.find((c: { frequency: number }) => Math.abs(c.frequency - 50.1) < 0.1)];
const signals = [accCase, micCase].map((c) => sine(ref.seconds * c.fs, c.fs, c.frequency, ref.amplitude));

/** The channel's bands of one fraction against the reference's: a band holding the tone within 0.05 dB, the others 40 dB down. */
function holdsReference(row: Record<string, number | null>, c: { bands: { fraction: number; x: number; ms: number }[] }, fraction: number) {
  const bands = c.bands.filter((b) => b.fraction === fraction && column(b) in row);
  expect(bands.length).toBeGreaterThan(3);
  for (const b of bands) {
    const name = column(b), got = row[name]!;
    expect(got, name).not.toBeNull();
    if (b.ms > 0.5) expect(Math.abs(db(got ** 2 / b.ms)), name).toBeLessThan(0.05);
    else expect(db(got ** 2), name).toBeLessThan(-40);
  }
}

const columnsOf = (row: Record<string, unknown>, prefix: string) => Object.keys(row).filter((k) => k.startsWith(prefix));

describe('octave sets, each on the channels its own only: selects', () => {
  it('two sets with different selectors: the octave bands on acc alone, the one-third-octave bands on mic alone, each against scipy', async () => {
    const spec: ReductionSpec = {
      spectrum,
      octave_bands: [
        { fraction: 1, from: 31.5, to: 500, only: { names: ['acc'] } },
        { fraction: 3, from: 25, to: 500, levels_db: true, only: { quantities: ['sound_pressure'] } },
      ],
    };
    const { row } = await reduceChannels(signals, [acc, mic], 8000, spec);
    const a = row('acc'), m = row('mic');
    // Every column is in every row: the set a channel is not selected for is null there.
    for (const name of columnsOf(a, 'oct3_')) expect(a[name], `acc ${name}`).toBeNull();
    for (const name of columnsOf(m, 'oct1_')) expect(m[name], `mic ${name}`).toBeNull();
    holdsReference(a, accCase, 1);
    holdsReference(m, micCase, 3);
    // The tone's one-third-octave band (50 Hz) as a level: 1 Pa RMS is 93.98 dB re 20 µPa.
    expect(m[column({ fraction: 3, x: -13 }, 'db')]).toBeCloseTo(93.98, 1);
  });

  it('a set without only: on every channel, beside a set with one; the columns keep the spec\'s order', async () => {
    const spec: ReductionSpec = {
      spectrum,
      octave_bands: [
        { fraction: 1, from: 31.5, to: 500 },
        { fraction: 3, from: 25, to: 500, only: { names: ['m*'] } },
      ],
    };
    const { row } = await reduceChannels(signals, [acc, mic], 8000, spec);
    const a = row('acc'), m = row('mic');
    holdsReference(a, accCase, 1);
    holdsReference(m, micCase, 1);
    holdsReference(m, micCase, 3);
    for (const name of columnsOf(a, 'oct3_')) expect(a[name], `acc ${name}`).toBeNull();
    const names = featureColumns(spec).map((c) => c.name).filter((n) => n.startsWith('oct'));
    expect(names.filter((n) => n.startsWith('oct1_')).length).toBeGreaterThan(0);
    expect(names).toEqual([...names.filter((n) => n.startsWith('oct1_')), ...names.filter((n) => n.startsWith('oct3_'))]);
  });

  it('sets sharing one selector stay one stage (one finer spectrum, the same cache key as one set list)', () => {
    const sets = [{ fraction: 1 as const, from: 31.5, to: 8000 }, { fraction: 3 as const, from: 25, to: 10000, levels_db: true }];
    const octave = (spec: ReductionSpec) => activeStages(spec).filter((s) => s.definition === octaveBands);
    expect(octave({ octave_bands: sets }).map((s) => s.options.sets.length)).toEqual([2]);
    const selected = octave({ octave_bands: sets.map((s) => ({ ...s, only: { quantities: ['acceleration'] } })) });
    expect(selected.map((s) => [s.options.sets.length, s.only])).toEqual([[2, { quantities: ['acceleration'] }]]);
    // A set between two of another selector parts them: three stages, in the spec's order.
    const parted = octave({ octave_bands: [{ ...sets[0], only: { names: ['a'] } }, { ...sets[1], only: { names: ['b'] } }, { fraction: 3, from: 12500, to: 16000, only: { names: ['a'] } }] });
    expect(parted.map((s) => s.only?.names)).toEqual([['a'], ['b'], ['a']]);
  });
});
