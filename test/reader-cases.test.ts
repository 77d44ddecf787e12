// The readers' harder cases against files written by independent tools (test/fixtures/make-reader-cases.py: h5py 3.7 on
// HDF5 1.10.8, scipy.io.savemat 1.10.1, hdf5storage 0.1.19, libsndfile 1.2 through soundfile, sox 14.4.2): HDF5 filters
// the library has and one it lacks, one-sided and transposed matrices, a bext chunk after the data, sox's stand-in sizes.
import { cpSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import type { Hdf5Layout } from '../stages/read/hdf5.js';
import type { MatLayout } from '../stages/read/mat.js';
import { streamedSize } from '../stages/read/wav.js';
import { openForJob } from '../pipeline/reduce/compute.js';
import { openRecording } from '../stages/read/open.js';
import { fixture, quern, readAll, readJson, tempDir } from './helpers.js';

const cases = readJson(fixture('reader-cases', 'expected.json')).files;
const at = (name: string) => fixture('reader-cases', name);

/** What the independent tool read back, per channel (make-reader-cases.py's <file>.f64: frames interleaved). */
function expected(name: string): number[][] {
  const b = readFileSync(`${at(name)}.f64`);
  const all = new Float64Array(b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength));
  const { channels, frames } = cases[name];
  return Array.from({ length: channels }, (_, c) => Array.from({ length: frames }, (_, i) => all[i * channels + c]));
}

const hdf5 = (l: Partial<Hdf5Layout>): Hdf5Layout => ({ datasets: ['/rig/acc'], channel_axis: 1, sample_rate_attribute: 'fs', start_time_attribute: null, ...l });
const mat = (l: Partial<MatLayout>): MatLayout => ({ variables: ['data'], channel_axis: null, sample_rate_variable: 'fs', start_time_variable: null, ...l });

const LZF_REFUSED = 'dataset "/rig/acc" is compressed with the LZF filter (HDF5 filter 32000), which quern\'s HDF5 library does not have, so its samples cannot be read; save the file again with gzip compression: h5repack -f GZIP=4 lzf.h5 lzf-gzip.h5 (or h5py\'s compression=\'gzip\')';

describe('HDF5 filters', () => {
  // The HDF5 File Format Specification's own filters, ids 1–6 (szip is 4; nbit 5; scaleoffset 6), as h5py wrote them.
  it.each(['gzip-shuffle-fletcher32.h5', 'szip.h5', 'scaleoffset.h5', 'nbit.h5'])('%s (the library\'s own filters) reads to the samples h5py reads', async (name) => {
    const { rec, channels } = await readAll(at(name), { hdf5: hdf5({}) });
    expect([rec.sampleRate, rec.frames]).toEqual([2000, 3000]);
    expect(channels).toEqual(expected(name));
  });

  it('refuses a dataset h5py compressed with LZF (filter 32000) as it opens, naming dataset, filter and what to do', async () => {
    expect(cases['lzf.h5'].filters).toEqual([32000]);
    await expect(readAll(at('lzf.h5'), { hdf5: hdf5({}) })).rejects.toThrow(LZF_REFUSED);
    // The same as a time dataset: whatever dataset the declaration names is held to the filters.
    await expect(readAll(at('lzf.h5'), { hdf5: hdf5({ datasets: ['/rig/acc'], sample_rate_attribute: null, time_dataset: '/rig/acc' }) })).rejects.toThrow(/"\/rig\/acc" is compressed with the LZF filter/);
  });

  it('check, peek and reduce refuse it alike; the other recordings reduce', () => {
    const root = join(tempDir(), 'archive');
    mkdirSync(join(root, 'h5'), { recursive: true });
    cpSync(at('lzf.h5'), join(root, 'h5', 'lzf.h5'));
    cpSync(at('szip.h5'), join(root, 'h5', 'szip.h5'));
    writeFileSync(join(root, 'archive.yaml'), 'groups:\n  - name: rig\n    match: "h5/*.h5"\n    hdf5:\n      datasets: [/rig/acc]\n      channel_axis: 1\n      sample_rate_attribute: fs\n');
    const check = quern('check', root);
    expect(check.code).toBe(1);
    expect(check.stdout).toContain(`FAILED  h5/lzf.h5  [rig]  ${LZF_REFUSED}`);
    expect(check.stdout).toMatch(/ok {6}h5\/szip\.h5/);
    const peek = quern('peek', join(root, 'h5', 'lzf.h5'));
    expect(peek.code).toBe(1);
    expect(peek.stderr).toContain(LZF_REFUSED);
    const out = join(root, '..', 'out');
    expect(quern('reduce', root, '--out', out, '--quiet', '--jobs', '1').code).toBe(1);
    const lines = readJson(join(out, 'run.json')).recordings;
    expect(lines.find((r: { recording: string }) => r.recording === 'h5/lzf.h5').reason).toBe(LZF_REFUSED);
    expect(lines.find((r: { recording: string }) => r.recording === 'h5/szip.h5').status).toBe('reduced');
  });
});

describe('matrices with one side 1, and matrices lying the other way round', () => {
  it('reads a 1 × N HDF5 dataset as one channel whatever channel axis is declared, as the README says', async () => {
    for (const channel_axis of [null, 0, 1] as const) {
      const { rec, channels } = await readAll(at('row-vector.h5'), { hdf5: hdf5({ datasets: ['/x'], channel_axis }) });
      expect([rec.channelCount, rec.frames, rec.sampleRate]).toEqual([1, 6000, 1000]);
      expect(channels).toEqual(expected('row-vector.h5'));
    }
  });

  it('names the channel axis, not a damaged header, when the declared axis would make over 4096 channels of a matrix', async () => {
    await expect(readAll(at('channels-by-samples.h5'), { hdf5: hdf5({ datasets: ['/data'], channel_axis: 1 }) }))
      .rejects.toThrow('dataset "/data" is 3 × 6000: by channel axis 1 its 6000 columns would be channels, more than the 4096 quern reads, of 3 samples each; if its 3 rows are the channels, set hdf5.channel_axis in archive.yaml to 0');
    await expect(readAll(at('channels-by-samples.mat'), { mat: mat({ channel_axis: 1 }) }))
      .rejects.toThrow(/^variable "data" \(byte \d+\) is 3 × 6000: by channel axis 1 its 6000 columns would be channels, more than the 4096 quern reads, of 3 samples each; if its 3 rows are the channels, set mat.channel_axis in archive.yaml to 0$/);
    await expect(readAll(at('channels-by-samples-73.mat'), { mat: mat({ channel_axis: 1 }) }))
      .rejects.toThrow('version 7.3 MAT-file (HDF5): variable "data" is 3 × 6000: by channel axis 1 its 6000 columns would be channels, more than the 4096 quern reads, of 3 samples each; if its 3 rows are the channels, set mat.channel_axis in archive.yaml to 0');
    // Declared the right way, each reads to what h5py, scipy and hdf5storage read.
    expect((await readAll(at('channels-by-samples.h5'), { hdf5: hdf5({ datasets: ['/data'], channel_axis: 0 }) })).channels).toEqual(expected('channels-by-samples.h5'));
    expect((await readAll(at('channels-by-samples.mat'), { mat: mat({ channel_axis: 0 }) })).channels).toEqual(expected('channels-by-samples.mat'));
    expect((await readAll(at('channels-by-samples-73.mat'), { mat: mat({ channel_axis: 0 }) })).channels).toEqual(expected('channels-by-samples-73.mat'));
  });

  it('names the channel axis when the matrix\'s other axis holds as many channels as the group declares', async () => {
    const declared = (n: number) => Array.from({ length: n }, (_, i) => ({ name: `c${i}`, quantity: 'strain', unit: 'FS', scale: 1, offset: 0, range: null, bits: null, max_frequency_hz: null }));
    const job = (path: string, reader: object, n: number) => ({ recording: 'r', path, group: 'rig', format: null, sampleRate: null, layout: null, reader, labels: {}, durationS: null, spec: {}, chunkFrames: 65536, channels: declared(n) });
    // named.h5 (h5py, make-format-fixtures.py) is samples × channels, 2000 × 3; rig-columns.mat (scipy) is 3000 × 4.
    await expect(openForJob(job(fixture('formats', 'named.h5'), { hdf5: hdf5({ datasets: ['/rig/strain'], channel_axis: 0 }) }, 3)))
      .rejects.toThrow('header: the file has 2000 channels but group "rig" declares 3; its other axis holds 3: if those are the channels, change hdf5.channel_axis in archive.yaml');
    await expect(openForJob(job(fixture('mat', 'rig-columns.mat'), { mat: mat({ channel_axis: 0, sample_rate_variable: 'fs' }) }, 4)))
      .rejects.toThrow('header: the file has 3000 channels but group "rig" declares 4; its other axis holds 4: if those are the channels, change mat.channel_axis in archive.yaml');
    // Another count keeps the plain message.
    await expect(openForJob(job(fixture('formats', 'named.h5'), { hdf5: hdf5({ datasets: ['/rig/strain'], channel_axis: 1 }) }, 2)))
      .rejects.toThrow('header: the file has 3 channels but group "rig" declares 2; fix the channel list in archive.yaml or check the file');
  });
});

describe('WAV chunks after the data', () => {
  it('takes the start time from a bext chunk after the data (EBU Tech 3285), past an odd-sized chunk and its pad byte', async () => {
    const { rec, channels } = await readAll(at('bext-after-data.wav'));
    expect([rec.startTime?.toISOString(), rec.sampleRate, rec.notes]).toEqual([cases['bext-after-data.wav'].start_time, 8000, []]);
    expect(channels).toEqual(expected('bext-after-data.wav'));
  });

  it('reads the samples of a file whose trailing bext chunk runs past the end, with a note and no start time', async () => {
    const { rec, channels } = await readAll(at('bext-after-data-damaged.wav'));
    const { trailing_from: from, trailing_bytes: bytes } = cases['bext-after-data-damaged.wav'];
    expect(rec.startTime).toBeNull();
    expect(rec.notes).toEqual([`the "bext" chunk after the data (byte ${from}) declares 100000 bytes, more than the ${bytes - 8} left in the file: it is cut short or damaged and was ignored, so the start time is unknown; the samples before it are whole`]);
    expect(channels).toEqual(expected('bext-after-data.wav'));
  });

  it('check shows the start a bext after the data gives (where --since places the recording)', () => {
    const root = join(tempDir(), 'archive');
    mkdirSync(join(root, 'wav'), { recursive: true });
    cpSync(at('bext-after-data.wav'), join(root, 'wav', 'b.wav'));
    writeFileSync(join(root, 'archive.yaml'), 'groups:\n  - name: snd\n    match: "wav/*.wav"\n');
    const check = quern('check', root);
    expect(check.code, check.stdout + check.stderr).toBe(0);
    expect(check.stdout).toContain('starts 2026-11-19T03:04:05.000Z');
  });
});

describe('WAV written as a stream', () => {
  it('says a file sox wrote to a pipe keeps its stand-in sizes, not that it was cut short', async () => {
    const c = cases['sox-pipe.wav'];
    expect(c.data_size_field).toBe(0x7ffff000); // the stand-in sox 14.4.2 leaves for 4-byte frames
    const err = await readAll(at('sox-pipe.wav')).catch((e) => e);
    expect(err.message).toBe(`byte 40: the data chunk's size (2147479552 bytes) is a stand-in, not the samples' size: the file holds ${c.data_bytes} bytes of samples and nothing after them. It was written as a stream (to a pipe) and its sizes were never filled in; write it again with its sizes (sox in.wav out.wav) and reduce the copy. Only if the capture really was over 2 GiB was the file cut short: then copy it again`);
  });

  it('reads a file ffmpeg 5.1 wrote to a pipe (RIFF and data sizes 0xFFFFFFFF) to the samples soundfile (libsndfile 1.2) reads, with a note', async () => {
    const c = cases['ffmpeg-pipe.wav'];
    expect([c.riff_size_field, c.data_size_field]).toEqual([0xffffffff, 0xffffffff]);
    const { rec, channels } = await readAll(at('ffmpeg-pipe.wav'));
    expect([rec.channelCount, rec.frames, rec.sampleRate, rec.encoding]).toEqual([3, 4000, 8000, 'pcm16']);
    expect(channels).toEqual(expected('ffmpeg-pipe.wav'));
    expect(rec.notes).toEqual([`the data chunk's size (byte ${c.data_at + 4}) was never written (4294967295), as a writer streaming to a pipe leaves it: its samples were read to the end of the file, 4000 frames; if anything but samples follows them, the header cannot say so: to be sure, write the file again with its sizes (sox in.wav out.wav)`]);
  });

  // A 16-bit stereo file laid out by hand (RIFF, Microsoft 1991: RIFF header, 16-byte PCM fmt chunk, data chunk); the
  // reference is the samples written. libsndfile 1.2 reads the 0xFFFFFFFF file to its end (soundfile, checked by hand) and
  // reads the size-0 one as empty; quern reads the samples of both, since a size of 0 before bytes that form no chunk is a
  // size never written.
  const codes = Int16Array.from({ length: 2 * 1000 }, (_, i) => Math.round(12000 * Math.sin(i * 0.37) + (i % 2 ? -3000 : 5000)));
  const fmt = () => { const b = Buffer.alloc(24); b.write('fmt ', 0, 'latin1'); b.writeUInt32LE(16, 4); b.writeUInt16LE(1, 8); b.writeUInt16LE(2, 10); b.writeUInt32LE(8000, 12); b.writeUInt32LE(32000, 16); b.writeUInt16LE(4, 20); b.writeUInt16LE(16, 22); return b; };
  const chunkHead = (id: string, size: number) => { const b = Buffer.alloc(8); b.write(id, 0, 'latin1'); b.writeUInt32LE(size, 4); return b; };
  const samples = Buffer.from(codes.buffer);
  const handMade = (riffSize: number, dataSize: number, after: Buffer = Buffer.alloc(0), dataFirst = false) => {
    const riff = Buffer.concat([Buffer.from('RIFF', 'latin1'), Buffer.alloc(4), Buffer.from('WAVE', 'latin1')]);
    riff.writeUInt32LE(riffSize, 4);
    const data = Buffer.concat([chunkHead('data', dataSize), samples]);
    const path = join(tempDir(), 'stream.wav');
    writeFileSync(path, Buffer.concat(dataFirst ? [riff, data, fmt(), after] : [riff, fmt(), data, after]));
    return path;
  };
  const written = [0, 1].map((c) => Array.from({ length: 1000 }, (_, i) => codes[2 * i + c] / 32768));

  it.each([[0xffffffff, 0xffffffff], [0, 0]])('reads a hand-made file whose RIFF size is %d and data size %d to the samples written, with a note', async (riffSize, dataSize) => {
    const { rec, channels } = await readAll(handMade(riffSize, dataSize));
    expect([rec.frames, rec.sampleRate]).toEqual([1000, 8000]);
    expect(channels).toEqual(written);
    expect(rec.notes).toEqual([`the data chunk's size (byte 40) was never written (${dataSize}), as a writer streaming to a pipe leaves it: its samples were read to the end of the file, 1000 frames; if anything but samples follows them, the header cannot say so: to be sure, write the file again with its sizes (sox in.wav out.wav)`]);
  });

  it('notes a partial last frame of a stream as of any file, reading the whole frames (as soundfile does)', async () => {
    const { rec, channels } = await readAll(handMade(0xffffffff, 0xffffffff, Buffer.from([1, 2, 3])));
    expect(rec.frames).toBe(1000);
    expect(channels).toEqual(written);
    expect(rec.notes[1]).toBe('data chunk ends with 3 bytes of a partial frame, ignored');
  });

  it('takes an empty data chunk followed by whole chunks as empty, as libsndfile does', async () => {
    const path = join(tempDir(), 'empty.wav');
    const list = Buffer.concat([chunkHead('LIST', 4), Buffer.from('INFO', 'latin1')]);
    writeFileSync(path, Buffer.concat([Buffer.from('RIFF\0\0\0\0WAVE', 'latin1'), fmt(), chunkHead('data', 0), list]));
    const rec = await openRecording(path);
    expect([rec.frames, rec.notes]).toEqual([0, []]);
    await rec.close();
  });

  it('refuses a stream whose data chunk comes before its fmt chunk, where the samples\' end cannot be known', async () => {
    await expect(readAll(handMade(0xffffffff, 0xffffffff, Buffer.alloc(0), true)))
      .rejects.toThrow('byte 16: the data chunk\'s size was never written (4294967295), as a writer streaming to a pipe leaves it, and no fmt chunk comes before it, so where its samples end is unknown; write the file again with its sizes (sox in.wav out.wav) and reduce the copy');
  });

  it('check reads the ffmpeg stream, and reduce writes its note to run.json under the recording', () => {
    const root = join(tempDir(), 'archive');
    mkdirSync(join(root, 'wav'), { recursive: true });
    cpSync(at('ffmpeg-pipe.wav'), join(root, 'wav', 'ff.wav'));
    writeFileSync(join(root, 'archive.yaml'), 'groups:\n  - name: snd\n    match: "wav/*.wav"\n');
    const check = quern('check', root);
    expect(check.code, check.stdout + check.stderr).toBe(0);
    expect(check.stdout).toContain('ok      wav/ff.wav  [snd]  wav pcm16, 3 channels (ch1, ch2, ch3), 8000 Hz, 0.500 s');
    // The reader's note on the size never written, on check's line for the recording as its other notes are.
    expect(check.stdout).toMatch(/^ok {6}wav\/ff\.wav {2}\[snd\] {2}.*; note: the data chunk's size \(byte \d+\) was never written \(4294967295\), as a writer streaming to a pipe leaves it: its samples were read to the end of the file, 4000 frames;/m);
    const out = join(root, '..', 'out');
    const reduce = quern('reduce', root, '--out', out, '--quiet', '--jobs', '1');
    expect(reduce.code, reduce.stdout + reduce.stderr).toBe(0);
    const line = readJson(join(out, 'run.json')).recordings.find((r: { recording: string }) => r.recording === 'wav/ff.wav');
    expect(line.status).toBe('reduced');
    expect(JSON.stringify(line)).toContain('was never written (4294967295), as a writer streaming to a pipe leaves it');
  });

  it('tells a stand-in from a size cut short by magnitude and share', () => {
    expect(streamedSize(0x7ffff000, 48000)).toBe(true);
    expect(streamedSize(0x7fffeffc, 0)).toBe(true); // sox's stand-in for 6-byte frames
    expect(streamedSize(0xfffffff0, 1e6)).toBe(true);
    // A capture of 3 GiB cut at two thirds, and a small file cut short, are cut short.
    expect(streamedSize(3 * 2 ** 30, 2 * 2 ** 30)).toBe(false);
    expect(streamedSize(48000, 100)).toBe(false);
  });
});
