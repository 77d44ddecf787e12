// Every sample type of HDF5 and MAT-files against the independent writers and readers that made them
// (test/fixtures/make-sample-types.py): h5py 3.7 (HDF5 1.10.8), scipy.io 1.10.1 savemat/loadmat, hdf5storage 0.1.19.
// Integers are compared normalised to ±1 of 2^(precision − 1), unsigned as offset binary (common practice, as the raw
// and WAV readers do), by exact fractions rounded once in Python.
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { fixture, readAll, readJson } from './helpers.js';
import { reduceRecording } from '../pipeline/reduce/compute.js';
import type { Hdf5Layout } from '../stages/read/hdf5.js';
import type { MatLayout } from '../stages/read/mat.js';
import { channel } from './reduce-signal.js';

interface Case { file: string; kind: 'hdf5' | 'mat'; frames: number; made_by: string; read_by: string; encoding?: string; bits?: number | null; refused?: boolean; figures?: Record<'min' | 'max' | 'mean' | 'rms', number> }
const manifest: { rate: number; files: Case[] } = readJson(fixture('sample-types', 'expected.json'));
const hdf5: Hdf5Layout = { datasets: ['x'], channel_axis: null, sample_rate_attribute: 'fs', start_time_attribute: null };
const mat: MatLayout = { variables: ['x'], channel_axis: null, sample_rate_variable: 'fs', start_time_variable: null };
const options = (c: Case) => (c.kind === 'hdf5' ? { hdf5 } : { mat });

function expected(c: Case): number[] {
  const b = readFileSync(fixture('sample-types', `${c.file}.f64`));
  return Array.from(new Float64Array(b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength)));
}

describe('HDF5 and MAT-files of every sample type read as their independent readers read them', () => {
  for (const c of manifest.files.filter((f) => !f.refused)) {
    it(`${c.file}: ${c.made_by}; against ${c.read_by}`, async () => {
      const { rec, channels } = await readAll(fixture('sample-types', c.file), options(c));
      expect([rec.encoding, rec.bits, rec.normalised, rec.sampleRate, rec.frames]).toEqual([c.encoding, c.bits, c.bits != null, manifest.rate, c.frames]);
      expect(channels[0]).toEqual(expected(c));
    });
  }

  it('has a case for every integer type narrower than its storage, both byte orders and a bit offset', () => {
    const narrow = manifest.files.filter((f) => /in\d+/.test(f.encoding ?? ''));
    expect(narrow.map((f) => f.encoding)).toEqual(expect.arrayContaining(['int24in32', 'uint24in32', 'int12in16', 'int12in16 from bit 4', 'uint12in16 from bit 2', 'int24in32 from bit 8', 'int40in64']));
  });

  for (const c of manifest.files.filter((f) => f.refused && f.kind === 'mat')) {
    it(`${c.file}: a logical array is refused, naming the variable and its class (${c.made_by})`, async () => {
      await expect(readAll(fixture('sample-types', c.file), options(c))).rejects.toThrow(/variable "x".*logical/);
    });
  }

  it('refuses floats that are not IEEE 754 (an exponent bias of 100), naming the dataset, its layout and what to do, rather than reading their bits as IEEE floats', async () => {
    await expect(readAll(fixture('sample-types', 'float32-bias100.h5'), { hdf5 })).rejects.toThrow(/dataset "x" holds 32-bit floats that are not IEEE 754 \(.*bias 100.*\); quern reads IEEE float32 and float64: convert the dataset/);
  });
});

describe('integers narrower than their storage, reduced', () => {
  const job = (c: Case, bits: number | null) => ({
    recording: c.file, path: fixture('sample-types', c.file), group: 'rig', format: null, sampleRate: null, layout: null, reader: options(c), labels: {}, durationS: null,
    spec: { statistics: {} }, chunkFrames: 97, channels: [channel({ name: 'a', scale: 10, bits })],
  });

  for (const c of manifest.files.filter((f) => f.figures)) {
    it(`${c.file}: statistics equal numpy's of h5py's samples, and the converter step is that of ${c.bits} bits (LSB = full-scale range / 2^N, IEEE Std 1241, common practice)`, async () => {
      const r = await reduceRecording(job(c, null));
      expect(r.reason).toBeUndefined();
      const row = r.rows[0];
      for (const k of ['min', 'max', 'mean', 'rms'] as const) expect(row[k]).toBeCloseTo(10 * c.figures![k], 12);
      expect(row.step_size).toBe((2 * 10) / 2 ** c.bits!);
    });
  }

  it('a declared 32-bit converter on 24-bit codes in 32-bit storage steps at 24 bits, with a note naming both widths', async () => {
    const c = manifest.files.find((f) => f.file === 'int24in32-be-gzip.h5')!;
    const r = await reduceRecording(job(c, 32));
    expect(r.messages[0]).toMatch(/^channel a declares bits: 32, but the file holds 24-bit samples: .* so its 24 bits are used/);
    expect(r.rows[0].step_size).toBe((2 * 10) / 2 ** 24);
  });
});
