// Samples a logger dropped from an HDF5 time dataset or a MAT-file time vector are missing samples in their places: the
// same samples written by h5py, scipy.io.savemat and hdf5storage with the samples left out of the time vector, and as a
// float WAV holding NaN there (libsndfile), give the same samples, figures, windows and dropout verdict, and numpy's count
// of the samples left out. Files and counts: test/fixtures/make-time-vector-fixtures.py.
import { describe, expect, it } from 'vitest';
import { reduceRecording } from '../pipeline/reduce/compute.js';
import type { ChannelDeclaration } from '../spec/archive.js';
import type { Hdf5Layout } from '../stages/read/hdf5.js';
import { openHdf5 } from '../stages/read/hdf5.js';
import type { MatLayout } from '../stages/read/mat.js';
import { openMat } from '../stages/read/mat.js';
import type { ReaderOptions } from '../stages/read/open.js';
import type { Flag } from '../stages/quality/flag.js';
import { copyFileSync, mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { fixture, quern, readAll, readJson, tempDir } from './helpers.js';

interface Gaps { frames_written: number; samples_lost: number; gaps: number; largest: { samples: number; from_index: number; to_index: number; from: number; to: number } }
const expected = readJson(fixture('time-vectors', 'expected.json'));
const files: Record<string, Gaps> = expected.files;

const hdf5: Hdf5Layout = { datasets: ['/x'], channel_axis: 1, sample_rate_attribute: null, start_time_attribute: null, time_dataset: '/t' };
const mat: MatLayout = { variables: ['x'], channel_axis: 1, sample_rate_variable: null, start_time_variable: null, time_variable: 't' };
const readerOf = (file: string): ReaderOptions => (file.endsWith('.h5') ? { hdf5 } : { mat });
/** How each file's time vector is named in its messages. */
const holderOf = (file: string) => (file.endsWith('.h5') ? 'dataset "/t" (the time)' : 'variable "t" (the time)');

/** Jittered times step at 1000.0014 Hz by their own estimate: the rate is declared, as a lab declares its logger's. */
const declared = (file: string) => (file.includes('jitter') ? expected.sample_rate as number : null);

const decl = (name: string): ChannelDeclaration => ({ name, quantity: 'acceleration', unit: 'm/s^2', scale: 1, offset: 0, range: [-10, 10], bits: null, max_frequency_hz: 400 });
const SPEC = { statistics: {}, spectrum: {}, bands: [[20, 200]], time_weighting_s: [0.125, 1], mtvv: { integration_s: 1 }, windows: { length_s: 0.5 } } as never;

async function reduce(file: string, sampleRate: number | null = null) {
  const r = await reduceRecording({ recording: 'rec', path: fixture('time-vectors', file), group: 'rig', format: null, sampleRate, layout: null, reader: readerOf(file), channels: [decl('a'), decl('b')], labels: {}, durationS: null, spec: SPEC, chunkFrames: 1500 });
  expect(r.reason).toBeUndefined();
  const dropouts = r.quality.map((q) => q.flags.find((f) => f.name === 'dropout') as Flag);
  return { r, rows: r.rows as Record<string, unknown>[], dropouts };
}

/** A row's figures: the columns every format fills alike (the file's format differs by design). */
const figures = (row: Record<string, unknown>) => Object.fromEntries(Object.entries(row).filter(([k]) => !['format', 'encoding', 'start_time'].includes(k)));

/** The note a file's time vector gives, from numpy's count and the times on the largest gap's sides as its reader reads them. */
const noteOf = (file: string, g: Gaps) =>
  `samples lost: ${holderOf(file)} skips ${g.samples_lost} samples at its nominal step of 1.000 ms in ${g.gaps} gaps, read as missing samples; the largest, ${g.largest.samples} samples (${(g.largest.samples / expected.sample_rate).toPrecision(4)} s), lies between ${g.largest.from} s (index ${g.largest.from_index}) and ${g.largest.to} s (index ${g.largest.to_index})`;

describe('samples left out of a time vector against NaN in a float WAV (libsndfile), numpy counting them', () => {
  it.each(Object.keys(files))('%s reads the WAV\'s samples, NaN where its times skip, with no irregular step', async (file) => {
    const wav = await readAll(fixture('time-vectors', 'nan.wav'));
    const g = files[file];
    for (const chunkFrames of [97, 1500, 65536]) {
      const { rec, channels } = await readAll(fixture('time-vectors', file), { ...readerOf(file), chunkFrames, sampleRate: declared(file) });
      // The frames the file holds; the samples read are those and the ones lost.
      expect([rec.sampleRate, rec.frames, rec.channelCount]).toEqual([expected.sample_rate, g.frames_written, expected.channels]);
      expect(channels[0].length).toBe(expected.frames);
      expect(channels[0].filter(Number.isNaN).length).toBe(g.samples_lost);
      expect(channels).toEqual(wav.channels);
      expect(rec.timeSteps?.irregular).toBe(0);
      expect(rec.notes).toEqual([noteOf(file, g)]);
    }
  });

  it('times of POSIX seconds give the start time as well', async () => {
    const { rec } = await readAll(fixture('time-vectors', 'lost-posix.h5'), { hdf5 });
    expect(rec.startTime?.getTime()).toBe(expected.start_posix_s * 1000);
  });

  it('the reduced figures, every window row and the dropout verdict of every channel are the WAV\'s', async () => {
    const wav = await reduce('nan.wav');
    expect(wav.rows[0].duration_s).toBe(expected.frames / expected.sample_rate);
    expect(wav.dropouts[0].evidence).toMatchObject({ missing: files['lost.h5'].samples_lost, longest_gap_s: expected.longest_gap_s });
    // 2.5 s missing: past the 1 s gap that fails the flag (README, dropout).
    expect(wav.dropouts.map((d) => d.severity)).toEqual(['fail', 'fail']);
    for (const file of ['lost.h5', 'lost-jitter.h5', 'lost.mat', 'lost-73.mat']) {
      const timed = await reduce(file, declared(file));
      expect(timed.rows.map(figures)).toEqual(wav.rows.map(figures));
      expect(timed.r.tables.windows).toEqual(wav.r.tables.windows);
      // A time vector's irregular steps are counted (none here); a WAV file has none to count.
      for (let c = 0; c < 2; c++) {
        const [d, w] = [timed.dropouts[c], wav.dropouts[c]];
        expect([d.severity, d.value, d.evidence, d.message]).toEqual([w.severity, w.value, { ...w.evidence, irregular_steps: 0 }, w.message]);
      }
    }
  });

  it.each(['lost.h5', 'lost.mat', 'lost-73.mat'])('%s: a gap longer than the most samples read as missing fails the recording, naming the file, the time vector, the indices and the times on both sides', async (file) => {
    const l = files[file].largest;
    const path = fixture('time-vectors', file);
    const rec = file.endsWith('.h5')
      ? await openHdf5(path, hdf5, null, { chunkFrames: 1500, mostLostRows: l.samples - 1 })
      : await openMat(path, mat, null, { chunkFrames: 1500, mostLostRows: l.samples - 1 });
    const read = async () => { try { for await (const _ of rec.chunks()); } finally { await rec.close(); } };
    await expect(read()).rejects.toThrow(`index ${l.to_index}: ${holderOf(file)} jumps from ${l.from} s (index ${l.from_index}) to ${l.to} s, ${l.samples} samples lost at the nominal step of 1.000 ms, more than the ${l.samples - 1} quern reads as missing samples in one gap: a logger stopped and started again, or its clock set, within one file; split ${file} before index ${l.to_index} (counted from 0) and reduce each part as its own recording`);
  });
});

describe('quern check and quern peek give the duration reduce gives, the lost samples counted', () => {
  it('for HDF5 time datasets and MAT-file time vectors (h5py, scipy.io.savemat, hdf5storage): numpy\'s frames over the rate, as duration_s', async () => {
    const root = tempDir();
    mkdirSync(join(root, 'h5')); mkdirSync(join(root, 'mat'));
    const names = Object.keys(files);
    for (const f of names) copyFileSync(fixture('time-vectors', f), join(root, f.endsWith('.h5') ? 'h5' : 'mat', f));
    writeFileSync(join(root, 'archive.yaml'), `groups:
  - name: logger
    match: "h5/*.h5"
    format: hdf5
    sample_rate: ${expected.sample_rate}
    hdf5: { datasets: [/x], channel_axis: 1, time_dataset: /t }
  - name: matlab
    match: "mat/*.mat"
    format: mat
    sample_rate: ${expected.sample_rate}
    mat: { variables: [x], channel_axis: 1, time_variable: t }
`);
    const seconds = (expected.frames / expected.sample_rate).toFixed(3);
    const check = quern('check', root);
    expect(check.code).toBe(0);
    for (const f of names) {
      const at = join(f.endsWith('.h5') ? 'h5' : 'mat', f);
      // The file holds fewer frames (frames_written); its times say how many were lost, and reduce reads them as missing samples.
      expect(check.stdout).toMatch(new RegExp(`^ok +${at.replace('.', '\\.')} .*, ${seconds.replace('.', '\\.')} s,`, 'm'));
      const { rows } = await reduce(f, declared(f));
      expect((rows[0].duration_s as number).toFixed(3)).toBe(seconds);
      const peek = quern('peek', join(root, at));
      expect(peek.stdout).toContain(`duration    ${seconds} s (${expected.frames} frames)`);
    }
  });
});
