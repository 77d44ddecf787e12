// Time vectors held as float32 (h5py, scipy.io.savemat) long enough for their late steps to round by more than their first
// ones: 10 s at 25.6 kHz, whose times from 8 s on are held to float32's unit in the last place there (0.95 us, 2.4 % of a
// step). Clean, no step is irregular and no sample is lost; with samples left out past 8 s, numpy's count of them is found.
// Files and counts: test/fixtures/make-float32-time-fixtures.py.
import { describe, expect, it } from 'vitest';
import type { Hdf5Layout } from '../stages/read/hdf5.js';
import type { MatLayout } from '../stages/read/mat.js';
import { openRecording, type ReaderOptions } from '../stages/read/open.js';
import { float32Ulp, type VectorRate } from '../stages/read/time-steps.js';
import { timeVectorReader, toleranceAt } from '../stages/read/time-vector.js';
import { vectorIndices } from '../stages/read/lost-rows.js';
import { fixture, readAll, readJson } from './helpers.js';

interface Gaps { frames_written: number; samples_lost: number; gaps: number; largest_early_step_error: number; largest_late_regular_step_error: number; largest: { samples: number; from_index: number; to_index: number; from: number; to: number } | null }
const expected = readJson(fixture('float32-times', 'expected.json'));
const files: Record<string, Gaps> = expected.files;

const hdf5: Hdf5Layout = { datasets: ['/x'], channel_axis: 1, sample_rate_attribute: null, start_time_attribute: null, time_dataset: '/t' };
const mat: MatLayout = { variables: ['x'], channel_axis: 1, sample_rate_variable: null, start_time_variable: null, time_variable: 't' };
const readerOf = (file: string): ReaderOptions => (file.endsWith('.h5') ? { hdf5 } : { mat });
const holderOf = (file: string) => (file.endsWith('.h5') ? 'dataset "/t" (the time)' : 'variable "t" (the time)');

describe('float32 time vectors whose late steps round by more than their first ones', () => {
  it('the fixtures are what they claim: late steps off by more than 1 % of a step, the first 4,096 far less (numpy)', () => {
    for (const g of Object.values(files)) {
      expect(g.largest_early_step_error).toBeLessThan(0.001);
      expect(g.largest_late_regular_step_error).toBeGreaterThan(0.02);
    }
  });

  it.each(Object.keys(files))('%s: no irregular step, and numpy\'s count of the samples lost, in their places', async (file) => {
    const g = files[file];
    const { rec, channels } = await readAll(fixture('float32-times', file), { ...readerOf(file), chunkFrames: 4096 });
    expect([rec.sampleRate, rec.frames]).toEqual([expected.sample_rate, g.frames_written]);
    expect(rec.timeSteps?.irregular).toBe(0);
    expect(channels[0].length).toBe(expected.frames);
    expect(channels[0].filter(Number.isNaN).length).toBe(g.samples_lost);
    // The samples themselves: a 400 Hz tone of 64 samples a period (the script's), NaN where the times skip.
    const tone = (i: number) => Math.round(8000 * Math.sin((2 * Math.PI * i) / 64)) / 32768;
    expect(channels[0].every((v, i) => Number.isNaN(v) || v === tone(i))).toBe(true);
    if (g.largest) {
      const l = g.largest;
      expect(rec.notes).toEqual([`samples lost: ${holderOf(file)} skips ${g.samples_lost} samples at its nominal step of 0.03906 ms in ${g.gaps} gaps, read as missing samples; the largest, ${l.samples} samples (${(l.samples / expected.sample_rate).toPrecision(4)} s), lies between ${l.from} s (index ${l.from_index}) and ${l.to} s (index ${l.to_index})`]);
    } else expect(rec.notes).toEqual([]);
    // quern check's count, from the times alone, is the same.
    const again = await openRecording(fixture('float32-times', file), { ...readerOf(file), chunkFrames: 4096 });
    try { expect(await again.framesOfTimes!()).toBe(expected.frames); } finally { await again.close(); }
  });
});

describe('float32Ulp', () => {
  // IEEE 754 binary32: a 24-bit significand, so the unit in the last place in [2^e, 2^(e+1)) is 2^(e-23) (common practice).
  it('is 2^(e - 23) in the binade [2^e, 2^(e+1)), the gap to the next float32 there', () => {
    for (const [t, ulp] of [[1, 2 ** -23], [1.9999999, 2 ** -23], [2, 2 ** -22], [8, 2 ** -20], [9.7, 2 ** -20], [100, 2 ** -17], [0.1, 2 ** -27], [-100, 2 ** -17]]) {
      expect(float32Ulp(t)).toBe(ulp);
      // The next float32 up from a float32 lies one ulp away (Math.fround rounds to binary32).
      const f = Math.fround(Math.abs(t));
      expect(Math.fround(f + ulp) - f).toBe(ulp);
      expect(Math.fround(f + 0.49 * ulp)).toBe(f);
    }
    expect(float32Ulp(0)).toBe(2 ** -149);
  });
});

describe('toleranceAt', () => {
  const rate = (single: boolean): VectorRate => ({ step: 1 / 25600, rate: 25600, lowest: 25600, highest: 25600, tolerance: 4e-7, single });
  /** The spacing of float32 values at t, measured with Math.fround (binary32 rounding): the next one up less t's own. */
  const spacing = (t: number) => { const f = Math.fround(t); let d = 2 ** -30; while (Math.fround(f + d) === f) d *= 2; return Math.fround(f + d) - f; };

  it('float32 times: the first times\' tolerance plus the spacing of float32 values at the time, growing with it', () => {
    const told: number[] = [];
    const at = toleranceAt(rate(true), (t) => told.push(t));
    for (const t of [0.1, 9.7, 100, 9.7]) expect(at(t)).toBe(4e-7 + spacing(t + 1 / 25600));
    // 100 s at 25.6 kHz: 7.6 us, 0.2 of a step; at 300 s, 30.5 us, over half a step: told once, where it begins.
    expect(at(100) * 25600).toBeCloseTo(0.2, 1);
    expect(told).toEqual([]);
    at(300); at(400); at(300);
    expect(told).toEqual([300]);
  });

  it('a reader whose float32 times round by half a step or more says so in a note, from the first such time', () => {
    const r = timeVectorReader(rate(true), 1, 8, vectorIndices('dataset "/t" (the time)', 'long.h5'));
    // Float32 times of a 25.6 kHz clock past 256 s, where they round to 30.5 us (0.78 of a step).
    const times = Float64Array.from({ length: 8 }, (_, i) => Math.fround(299.99 + i / 25600));
    for (const _ of r.place([new Float64Array(8)], times, 8, 0));
    const into = { notes: [] as string[] };
    r.keep(into);
    expect(into.notes.filter((n) => n.startsWith('time vector coarse'))).toEqual([`time vector coarse: dataset "/t" (the time) holds float32 times, which from ${times[0]} s on round by up to 0.03052 ms, half its step of 0.03906 ms or more, so samples lost after there cannot be told from its rounding; save the time as double`]);
  });

  it('double times keep the first times\' tolerance', () => {
    const at = toleranceAt(rate(false));
    for (const t of [0.1, 100, 1e6]) expect(at(t)).toBe(4e-7);
  });
});
