// Rows a logger dropped from a CSV time column are missing samples in their places: the same samples as a CSV file with the
// rows left out and as a float WAV holding NaN there (libsndfile) give the same figures, windows and dropout verdict, and
// the rows numpy counts as left out. Files and counts: test/fixtures/make-lost-rows-fixtures.py.
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { reduceRecording } from '../pipeline/reduce/compute.js';
import type { ChannelDeclaration } from '../spec/archive.js';
import { openCsv } from '../stages/read/csv.js';
import { rowsLostIn } from '../stages/read/lost-rows.js';
import type { Flag } from '../stages/quality/flag.js';
import { fixture, readAll, readJson, tempDir } from './helpers.js';

const expected = readJson(fixture('lost-rows', 'expected.json'));
const decl: ChannelDeclaration = { name: 'x', quantity: 'acceleration', unit: 'm/s^2', scale: 1, offset: 0, range: [-10, 10], bits: null, max_frequency_hz: 400 };
const SPEC = { statistics: {}, spectrum: {}, bands: [[20, 200]], time_weighting_s: [0.125, 1], mtvv: { integration_s: 1 }, windows: { length_s: 0.5 } } as never;

async function reduce(file: string, sampleRate: number | null = null) {
  const r = await reduceRecording({ recording: 'rec', path: fixture('lost-rows', file), group: 'rig', format: null, sampleRate, layout: null, channels: [decl], labels: {}, durationS: null, spec: SPEC, chunkFrames: 1500 });
  expect(r.reason).toBeUndefined();
  const dropout = r.quality[0].flags.find((f) => f.name === 'dropout') as Flag;
  return { r, row: r.rows[0] as Record<string, unknown>, dropout };
}

/** A row's figures: the columns every format fills alike (the file's format and encoding differ by design). */
const figures = (row: Record<string, unknown>) => Object.fromEntries(Object.entries(row).filter(([k]) => !['format', 'encoding'].includes(k)));

describe('a step of k nominal steps is k − 1 rows lost (arithmetic of the step)', () => {
  it('whole multiples within the regular steps\' tolerance; steps between multiples, zero and backward steps are none', () => {
    expect([2, 3, 10, 2500].map((k) => rowsLostIn(k * 0.001 + 0.000008, 0.001, 0.00001))).toEqual([1, 2, 9, 2499]);
    expect([0.0015, 0.00251, 0.0105, 0, -0.002, 0.001].map((dt) => rowsLostIn(dt, 0.001, 0.00001))).toEqual([0, 0, 0, 0, 0, 0]);
    // The nominal step's own uncertainty adds up over the k steps: 3000 steps of a step known to 10 ns reach 30 µs.
    expect([rowsLostIn(3.00003, 0.001, 0.00001), rowsLostIn(3.00003, 0.001, 0.00001, 1e-8)]).toEqual([0, 2999]);
  });
});

describe('rows left out of a CSV file against NaN in a float WAV (libsndfile), numpy counting them', () => {
  it('the reader puts numpy\'s count of missing samples where the WAV holds NaN, and says where the largest gap lies', async () => {
    const csv = await readAll(fixture('lost-rows', 'lost.csv'));
    const wav = await readAll(fixture('lost-rows', 'nan.wav'));
    expect(csv.channels[0].length).toBe(expected.frames);
    expect(csv.channels[0].filter(Number.isNaN).length).toBe(expected.rows_lost);
    expect(csv.channels[0]).toEqual(wav.channels[0]);
    expect(csv.rec.sampleRate).toBe(expected.sample_rate);
    expect(csv.rec.timeSteps?.irregular).toBe(0);
    const l = expected.largest;
    expect(csv.rec.notes).toEqual([`rows lost: the time column skips ${expected.rows_lost} rows at its nominal step of 1.000 ms in ${expected.gaps} gaps, read as missing samples; the largest, ${l.rows} rows (2.500 s), lies between ${l.from} (line ${l.from_line}) and ${l.to} (line ${l.to_line})`]);
  });

  it('times jittered by ±0.3 % of the step lose the same rows', async () => {
    const csv = await readAll(fixture('lost-rows', 'lost-jitter.csv'));
    const wav = await readAll(fixture('lost-rows', 'nan.wav'));
    expect(csv.channels[0]).toEqual(wav.channels[0]);
    expect(csv.rec.timeSteps?.irregular).toBe(0);
  });

  it('the reduced figures, every window row and the dropout verdict are the WAV\'s', async () => {
    const wav = await reduce('nan.wav');
    expect(wav.row.duration_s).toBe(expected.frames / expected.sample_rate);
    expect(wav.dropout.evidence).toMatchObject({ missing: expected.rows_lost, longest_gap_s: expected.longest_gap_s });
    // 2.5 s missing: past the 1 s gap that fails the flag (README, dropout).
    expect(wav.dropout.severity).toBe('fail');
    for (const [file, rate] of [['lost.csv', null], ['lost-jitter.csv', expected.sample_rate]] as const) {
      const csv = await reduce(file, rate);
      expect(figures(csv.row)).toEqual(figures(wav.row));
      expect(csv.r.tables.windows).toEqual(wav.r.tables.windows);
      // A time column's irregular steps are counted (none here); a WAV file has none to count.
      expect([csv.dropout.severity, csv.dropout.value, csv.dropout.evidence, csv.dropout.message]).toEqual([wav.dropout.severity, wav.dropout.value, { ...wav.dropout.evidence, irregular_steps: 0 }, wav.dropout.message]);
    }
  });

  it('a step back and a repeated time lose no rows: they stay irregular steps, the samples read as they stand', async () => {
    // Times in ms, printed to 0.1 ms: back 2 ms after 9, a repeat of 9 after that.
    const ms = [0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 7, 8, 9, 9, 10, 11, 12];
    const path = join(tempDir(), 'back.csv');
    writeFileSync(path, ['time,x', ...ms.map((t, i) => `${(t / 1000).toFixed(4)},${i}`)].join('\n'));
    const { rec, channels } = await readAll(path);
    expect(channels[0]).toEqual(ms.map((_, i) => i));
    expect(rec.timeSteps?.irregular).toBe(2);
    expect(rec.timeSteps?.widest_s).toBeCloseTo(-0.002, 12);
    expect(rec.notes).toEqual([expect.stringMatching(/^time steps irregular: 2 of 16 steps differ from the nominal 1\.000 ms/)]);
  });

  it('a gap longer than the most rows read as missing fails the recording, naming the lines and times on both sides', async () => {
    const l = expected.largest;
    const rec = await openCsv(fixture('lost-rows', 'lost.csv'), { mostLostRows: l.rows - 1 });
    const read = async () => { for await (const _ of rec.chunks()); };
    await expect(read()).rejects.toThrow(`line ${l.to_line}: the time column jumps from ${l.from} (line ${l.from_line}) to ${l.to}, ${l.rows} rows lost at the nominal step of 1.000 ms, more than the ${l.rows - 1} quern reads as missing samples in one gap: a logger stopped and started again, or its clock set, within one file; split the file before line ${l.to_line} and reduce each part as its own recording`);
  });
});
