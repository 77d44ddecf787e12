// The HDF5 reader against files written and read back by h5py 3.7 (HDF5 1.10.8) (test/fixtures/make-format-fixtures.py).
import { describe, expect, it } from 'vitest';
import type { Hdf5Layout } from '../stages/read/hdf5.js';
import { expectedSamples, formatFixture } from './format-fixtures.js';
import { fixture, readAll } from './helpers.js';

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

  it('reads one dataset per channel with a declared sample rate', async () => {
    await expectFixture('per-channel.h5', layout({ datasets: ['/ch/a', '/ch/b', '/ch/c'] }), 1000);
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
