// The HDF5 reader against files written and read back by h5py 3.7 (HDF5 1.10.8) (test/fixtures/make-format-fixtures.py).
import { describe, expect, it } from 'vitest';
import { Tinypool } from 'tinypool';
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { RETIRE_ABOVE_HDF5_BYTES, RETIRE_AFTER_SET_ASIDE, reduceBatch } from '../pipeline/reduce/worker.js';
import type { Hdf5Layout } from '../stages/read/hdf5.js';
import { hdf5Instances, hdf5MemoryBytes, hdf5SetAside } from '../stages/read/hdf5-library.js';
import { expectedSamples, formatFixture } from './format-fixtures.js';
import { reduceRecording } from '../pipeline/reduce/compute.js';
import { fixture, readAll, tempDir } from './helpers.js';

const layout = (l: Partial<Hdf5Layout>): Hdf5Layout => ({ datasets: [], channel_axis: null, sample_rate_attribute: null, start_time_attribute: null, ...l });

async function expectFixture(file: string, hdf5: Hdf5Layout, sampleRate: number | null = null) {
  const f = formatFixture(file);
  const { rec, channels } = await readAll(fixture('formats', file), { hdf5, sampleRate });
  expect([rec.format, rec.sampleRate, rec.frames, rec.channelCount]).toEqual(['hdf5', f.rate, f.frames, f.channels]);
  const want = expectedSamples(f);
  for (let c = 0; c < f.channels; c++) expect(Float64Array.from(channels[c])).toEqual(want[c]);
  return rec;
}

describe('HDF5 reader against h5py', () => {
  it('reads samples × channels (int16, gzip and shuffle filters), the rate and start time from attributes', async () => {
    const rec = await expectFixture('acq-rows.h5', layout({ datasets: ['/acq/signals'], channel_axis: 1, sample_rate_attribute: 'sample_rate', start_time_attribute: 'start_time' }));
    expect(rec.startTime?.toISOString()).toBe(formatFixture('acq-rows.h5').start_time);
    expect([rec.bits, rec.normalised, rec.encoding]).toEqual([16, true, 'int16']);
  });

  it('reads channels × samples (float32), attributes on the root named by path, POSIX seconds as the start time', async () => {
    const rec = await expectFixture('acq-columns.h5', layout({ datasets: ['data'], channel_axis: 0, sample_rate_attribute: '/@fs', start_time_attribute: 't0' }));
    expect(rec.startTime?.toISOString()).toBe(formatFixture('acq-columns.h5').start_time);
  });

  it('reads the channels\' names from an attribute as h5py reads them, finds declared channels by them, and refuses names that do not fit', async () => {
    const l = layout({ datasets: ['/rig/strain'], channel_axis: 1, sample_rate_attribute: 'fs', channel_names_attribute: 'channel_names' });
    const rec = await expectFixture('named.h5', l);
    expect(rec.channelNames).toEqual(formatFixture('named.h5').channel_names);
    const read = (over: Partial<Hdf5Layout>) => readAll(fixture('formats', 'named.h5'), { hdf5: { ...l, ...over } });
    await expect(read({ channel_names_attribute: 'fs' })).rejects.toThrow(/attribute "fs" \(the channel names\) holds number, not text; the channel names are an array of text; correct hdf5.channel_names_attribute in archive.yaml/);
    await expect(read({ channel_names_attribute: 'labels' })).rejects.toThrow(/attribute "labels" \(the channel names\) is not on dataset "\/rig\/strain" or its groups/);
    await expect(read({ channel_axis: 0 })).rejects.toThrow(/attribute "channel_names" of dataset "\/rig\/strain" \(the channel names\) holds 3 names but the samples have 2000 channels/);
    // Declared in another order than stored: each declared channel reads its own samples.
    const want = expectedSamples(formatFixture('named.h5'));
    const job = { recording: 'named.h5', path: fixture('formats', 'named.h5'), group: 'rig', format: null, sampleRate: null, layout: null, reader: { hdf5: l }, labels: {}, durationS: null, spec: { statistics: {} }, chunkFrames: 300,
      channels: ['sg_tip', 'sg_root'].map((name) => ({ name, quantity: 'strain', unit: 'FS', scale: 1, offset: 0, range: null, bits: null, max_frequency_hz: null })) };
    const r = await reduceRecording(job);
    expect(r.rows.map((row) => [row.channel, row.max])).toEqual([['sg_tip', Math.max(...want[2])], ['sg_root', Math.max(...want[0])]]);
  });

  it('gives undeclared float channels the unit "stored" (the numbers as written), not "FS", which integer codes and audio files keep', async () => {
    const unitsOf = async (file: string, l: Hdf5Layout, sampleRate: number | null = null) => (await reduceRecording({ recording: file, path: fixture('formats', file), group: 'rig', format: null, sampleRate, layout: null, reader: { hdf5: l }, labels: {}, durationS: null, spec: { statistics: {} }, chunkFrames: 300, channels: null })).rows.map((row) => row.unit);
    // float64 datasets (h5py), and int16 codes, normalised to full scale.
    expect(await unitsOf('per-channel.h5', layout({ datasets: ['/ch/a', '/ch/b', '/ch/c'] }), 1000)).toEqual(['stored', 'stored', 'stored']);
    expect(await unitsOf('named.h5', layout({ datasets: ['/rig/strain'], channel_axis: 1, sample_rate_attribute: 'fs' }))).toEqual(['FS', 'FS', 'FS']);
  });

  it('reads one dataset a channel, each naming its channel in its own attribute, as h5py reads them', async () => {
    const rec = await expectFixture('named-per-channel.h5', layout({ datasets: ['/ch/a', '/ch/b'], channel_names_attribute: 'name' }), 400);
    expect(rec.channelNames).toEqual(formatFixture('named-per-channel.h5').channel_names);
  });

  it('reads one dataset per channel with a declared sample rate', async () => {
    await expectFixture('per-channel.h5', layout({ datasets: ['/ch/a', '/ch/b', '/ch/c'] }), 1000);
  });

  it('reads N × 1 and 1 × N datasets as one channel each, alone or one per channel (written by hdf5storage, make-mat-fixtures.py)', async () => {
    const path = fixture('mat', 'per-channel-73.mat');
    const want = readFileSync(`${path}.f64`);
    const all = new Float64Array(want.buffer.slice(want.byteOffset, want.byteOffset + want.byteLength));
    const column = (c: number) => Array.from({ length: 1500 }, (_, i) => all[2 * i + c]);
    for (const [c, dataset] of [[0, '/rec/acc_x'], [1, '/rec/acc_y']] as const) {
      const { rec, channels } = await readAll(path, { format: 'hdf5', hdf5: layout({ datasets: [dataset] }), sampleRate: 500 });
      expect([rec.channelCount, rec.frames, channels[0]]).toEqual([1, 1500, column(c)]);
    }
    const both = await readAll(path, { format: 'hdf5', hdf5: layout({ datasets: ['/rec/acc_x', '/rec/acc_y'] }), sampleRate: 500 });
    expect([both.rec.channelCount, both.rec.frames, both.channels]).toEqual([2, 1500, [column(0), column(1)]]);
  });

  it('reads the sample rate and the start time from datasets holding one value (a file written by hdf5storage, make-mat-fixtures.py)', async () => {
    const path = fixture('mat', 'rig-columns-73.mat');
    const b = readFileSync(fixture('mat', 'rig-columns-73.mat.f64'));
    const all = new Float64Array(b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength));
    const { rec, channels } = await readAll(path, { format: 'hdf5', hdf5: layout({ datasets: ['/data'], channel_axis: 0, sample_rate_dataset: '/fs', start_time_dataset: '/fs' }) });
    expect([rec.sampleRate, rec.frames, rec.channelCount, rec.startTime?.getTime()]).toEqual([12800, 2000, 3, 12800 * 1000]);
    for (let c = 0; c < 3; c++) expect(channels[c]).toEqual(Array.from({ length: 2000 }, (_, i) => all[3 * i + c]));
    const read = (l: Partial<Hdf5Layout>) => readAll(path, { format: 'hdf5', hdf5: layout({ datasets: ['/data'], channel_axis: 0, ...l }) });
    await expect(read({ sample_rate_dataset: '/t' })).rejects.toThrow(/dataset "\/t" \(the sample rate\) holds 2000 values \(1 × 2000\); it must hold one; correct hdf5.sample_rate_dataset in archive.yaml/);
    await expect(read({ sample_rate_dataset: '/none' })).rejects.toThrow(/dataset "\/none" \(the sample rate\) is not in the file/);
    await expect(read({ sample_rate_dataset: '/fs', start_time_dataset: '/t0' })).rejects.toThrow(/dataset "\/t0" \(the start time\) holds 25 values/);
  });

  it('takes the sample rate from a time dataset and reads the samples its steps skip as missing (files written by hdf5storage, make-mat-fixtures.py)', async () => {
    const steady = await readAll(fixture('mat', 'rig-columns-73.mat'), { format: 'hdf5', hdf5: layout({ datasets: ['/data'], channel_axis: 0, time_dataset: '/t' }) });
    expect([steady.rec.sampleRate, steady.rec.timeSteps?.irregular, steady.rec.notes]).toEqual([12800, 0, []]);
    // The time vector jumps 10 sample periods at frame 600 (11 ms, ending at t = 0.61 s): 10 samples lost, no irregular step.
    const gap = await readAll(fixture('mat', 'dropout-73.mat'), { format: 'hdf5', hdf5: layout({ datasets: ['/x'], channel_axis: 0, time_dataset: '/t' }), chunkFrames: 256 });
    expect([gap.rec.sampleRate, gap.rec.timeSteps?.irregular, gap.channels[0].length]).toEqual([1000, 0, 1010]);
    expect(gap.channels.map((c) => c.flatMap((v, i) => (Number.isNaN(v) ? [i] : [])))).toEqual([0, 1].map(() => Array.from({ length: 10 }, (_, i) => 600 + i)));
    expect(gap.rec.notes).toEqual(['samples lost: dataset "/t" (the time) skips 10 samples at its nominal step of 1.000 ms in 1 gap, read as missing samples; the largest, 10 samples (0.01000 s), lies between 0.599 s (index 599) and 0.61 s (index 600)']);
    // A declared rate the steps disagree with, and a time dataset of the wrong length, are refused.
    await expect(readAll(fixture('mat', 'dropout-73.mat'), { format: 'hdf5', sampleRate: 2000, hdf5: layout({ datasets: ['/x'], channel_axis: 0, time_dataset: '/t' }) })).rejects.toThrow(/dataset "\/t" \(the time\) steps at 1000\.00 Hz but the declaration says 2000 Hz/);
    await expect(readAll(fixture('mat', 'rig-columns-73.mat'), { format: 'hdf5', hdf5: layout({ datasets: ['/data'], channel_axis: 0, time_dataset: '/fs' }) })).rejects.toThrow(/dataset "\/fs" \(the time\) is 1 × 1; it must be a vector of 2000 times, one for each frame/);
  });

  it('names the dataset and the attribute in its errors', async () => {
    const read = (file: string, l: Partial<Hdf5Layout>, rate: number | null = 100) => readAll(fixture('formats', file), { format: 'hdf5', hdf5: layout(l), sampleRate: rate });
    await expect(read('acq-rows.h5', { datasets: ['/acq/missing'] })).rejects.toThrow(/dataset "\/acq\/missing" is not in the file/);
    await expect(read('acq-rows.h5', { datasets: ['/acq/signals'], channel_axis: 1, sample_rate_attribute: 'fs' })).rejects.toThrow(/attribute "fs" \(the sample rate\) is not on dataset "\/acq\/signals" or its groups/);
    await expect(read('acq-rows.h5', { datasets: ['/acq/signals'] })).rejects.toThrow(/dataset "\/acq\/signals" has two axes .*channel_axis/);
    await expect(read('uneven.h5', { datasets: ['/ch/a', '/ch/b'] })).rejects.toThrow(/dataset "\/ch\/b" holds 90 samples but "\/ch\/a" holds 100/);
    await expect(read('acq-rows.h5', { datasets: ['/acq'] })).rejects.toThrow(/"\/acq" is a Group, not a dataset/);
    await expect(read('pcm12in16.wav', { datasets: ['/x'] })).rejects.toThrow(/not an HDF5 file/);
    await expect(read('per-channel.h5', { datasets: ['/ch/a'] }, null)).rejects.toThrow(/no sample rate/);
  });
});

// A damaged file can stop the library's instance for good (HDF5 calls abort(), or the WebAssembly traps), sometimes only after
// earlier damaged files corrupted its memory, so that a good file is the one that meets the stop. The stops are made here
// on purpose: the instance's own methods throw what a stopped instance throws (a WebAssembly.RuntimeError).
describe('HDF5 reader when the library stops', () => {
  const rows = layout({ datasets: ['/acq/signals'], channel_axis: 1, sample_rate_attribute: 'sample_rate', start_time_attribute: 'start_time' });
  const columns = layout({ datasets: ['data'], channel_axis: 0, sample_rate_attribute: '/@fs', start_time_attribute: 't0' });
  const stop = () => { throw new WebAssembly.RuntimeError('Aborted(native code called abort())'); };
  // The module of instance k, as the reader loads it: the package's own first, then the same module under another URL.
  const instance = async (k: number) => {
    const m = (await import(k === 0 ? 'h5wasm/node' : `${import.meta.resolve('h5wasm/node')}?instance=${k}`)) as typeof import('h5wasm');
    await m.ready;
    return m;
  };

  // What the worker's task hands the pool, out of the wrapper that moves its memory.
  const reply = async () => (await reduceBatch({ items: [], beats: null }) as unknown as Record<symbol, unknown>)[Tinypool.valueSymbol];

  // Runs first: the tests after it set instances aside, which asks for a new thread too.
  it('asks for its thread to be replaced once a damaged header has made the library take over 256 MB, which it never gives back', async () => {
    expect(await reply()).toEqual({ records: [], retire: false });
    // One header word changed: the library reserves some 1.3 GB for an address it then finds beyond the file's end.
    const damaged = Buffer.from(readFileSync(fixture('formats', 'acq-columns.h5')));
    damaged.writeUInt32BE(12_345_678, 128);
    const path = join(tempDir(), 'grown.h5');
    writeFileSync(path, damaged);
    await expect(readAll(path, { hdf5: columns })).rejects.toThrow(/the HDF5 file cannot be opened: addr overflow/);
    expect(hdf5MemoryBytes()).toBeGreaterThan(RETIRE_ABOVE_HDF5_BYTES);
    expect(await reply()).toEqual({ records: [], retire: true });
    // The thread still reads good files meanwhile.
    await expectFixture('acq-columns.h5', columns);
  });

  it('reads the file again on a fresh instance, blames a file only when the fresh one stops too, and reads the next file', async () => {
    await expectFixture('acq-rows.h5', rows);
    const n = hdf5Instances(), aside = hdf5SetAside();
    // The instance in use stops in the middle of the samples: the same samples come from a fresh instance.
    const first = await instance(n - 1);
    const slice = first.Dataset.prototype.slice;
    first.Dataset.prototype.slice = stop;
    try { await expectFixture('acq-columns.h5', columns); } finally { first.Dataset.prototype.slice = slice; }
    expect([hdf5Instances(), hdf5SetAside()]).toEqual([n + 1, aside + 1]);
    // The instance in use and the next fresh one both stop while the file is opened: the file is blamed, with a reason.
    const [now, next] = [await instance(n), await instance(n + 1)];
    const gets = [now.File.prototype.get, next.File.prototype.get];
    now.File.prototype.get = next.File.prototype.get = stop;
    try {
      await expect(readAll(fixture('formats', 'acq-rows.h5'), { hdf5: rows })).rejects.toThrow(/^the HDF5 library stopped while opening the file \(Aborted\(native code called abort\(\)\)\), and again on a fresh instance: the file is damaged; copy it again$/);
    } finally { [now.File.prototype.get, next.File.prototype.get] = gets; }
    expect([hdf5Instances(), hdf5SetAside()]).toEqual([n + 2, aside + 3]);
    // The next file has an instance of its own and reads as h5py wrote it.
    await expectFixture('per-channel.h5', layout({ datasets: ['/ch/a', '/ch/b', '/ch/c'] }), 1000);
    expect(hdf5Instances()).toBe(n + 3);
  });

  it('asks for its thread to be replaced once it has set aside instances enough (each keeps its memory)', async () => {
    while (hdf5SetAside() < RETIRE_AFTER_SET_ASIDE) {
      expect(await reply()).toEqual({ records: [], retire: false });
      await expectFixture('acq-rows.h5', rows);
      const m = await instance(hdf5Instances() - 1);
      const get = m.File.prototype.get;
      m.File.prototype.get = stop;
      try { await expectFixture('acq-rows.h5', rows); } finally { m.File.prototype.get = get; }
    }
    expect(await reply()).toEqual({ records: [], retire: true });
  });

  it('takes files one at a time: files read at once all read whole', async () => {
    const files: [string, Hdf5Layout, number | null][] = [['acq-rows.h5', rows, null], ['acq-columns.h5', columns, null], ['per-channel.h5', layout({ datasets: ['/ch/a', '/ch/b', '/ch/c'] }), 1000]];
    await Promise.all([...files, ...files].map(([file, l, rate]) => expectFixture(file, l, rate)));
  });
});

describe('integer attributes narrower than their storage (h5py low-level API: test/fixtures/make-hdf5-attribute-fixtures.py)', () => {
  const made = JSON.parse(readFileSync(fixture('hdf5-attributes', 'expected.json'), 'utf8'));
  const layout = (rate: string): Hdf5Layout => ({ datasets: ['/acq/x'], channel_axis: null, sample_rate_attribute: rate, start_time_attribute: '/@start' });

  it('read by their precision and bit offset, as h5py reads them: a 24-bit rate from bit 8 of 32, a 40-bit start from bit 4 of 64', async () => {
    const { rec, channels } = await readAll(fixture('hdf5-attributes', made.file), { hdf5: layout('fs') });
    // Read as its storage word, the rate would be 25600 × 2^8 Hz.
    expect(rec.sampleRate).toBe(made.attributes.fs);
    expect(rec.startTime?.getTime()).toBe(made.attributes.start * 1000);
    expect(channels[0].length).toBe(made.frames);
  });

  it('on an enclosing group too: a 12-bit rate in 16-bit storage', async () => {
    const { rec } = await readAll(fixture('hdf5-attributes', made.file), { hdf5: layout('fs12') });
    expect(rec.sampleRate).toBe(made.attributes.fs12);
  });

  // Dense storage (h5py, track_order=True and more than 8 attributes) and committed types: h5py's values in expected.json.
  const dense = made.layouts['dense-attributes.h5'], committed = made.layouts['committed-type-attributes.h5'];
  const rateOf = async (file: string, dataset: string, attribute: string) =>
    (await readAll(fixture('hdf5-attributes', file), { hdf5: { datasets: [dataset], channel_axis: null, sample_rate_attribute: attribute, start_time_attribute: null } })).rec.sampleRate;

  it('kept in dense attribute storage: a 24-bit rate from bit 8 of 32 on the dataset, a 12-bit one and a plain int32 on its group', async () => {
    expect(dense.precision_offset.fs).toEqual([24, 8]);
    // As h5wasm gives it, the storage word: 25600 × 2^8.
    expect(await rateOf('dense-attributes.h5', '/acq/x', 'fs')).toBe(dense.attributes.fs);
    expect(await rateOf('dense-attributes.h5', '/acq/x', 'fs12')).toBe(dense.attributes.fs12);
    expect(await rateOf('dense-attributes.h5', '/acq/x', 'fs32')).toBe(dense.attributes.fs32);
  });

  it('kept in dense storage after 120 other attributes, in a heap of several blocks under an indirect one', async () => {
    expect(await rateOf('dense-attributes.h5', '/acq/many', 'rate')).toBe(dense.attributes.rate);
  });

  it('of a committed datatype: a 24-bit type from bit 8 of 32 stored once and named by the attribute, and a committed int32', async () => {
    expect([committed.committed.fs, committed.precision_offset.fs]).toEqual([true, [24, 8]]);
    expect(await rateOf('committed-type-attributes.h5', '/acq/x', 'fs')).toBe(committed.attributes.fs);
    expect(await rateOf('committed-type-attributes.h5', '/acq/x', 'fs32')).toBe(committed.attributes.fs32);
  });
});
