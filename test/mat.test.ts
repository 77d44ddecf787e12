// The MAT-file reader against files written by scipy.io.savemat 1.10.1 and one written byte by byte from MathWorks' "MAT-File
// Format" description, each read back by scipy.io.loadmat (test/fixtures/make-mat-fixtures.py).
import { describe, expect, it } from 'vitest';
import { copyFileSync, mkdirSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { deflateSync } from 'node:zlib';
import { join } from 'node:path';
import type { MatLayout } from '../stages/read/mat.js';
import { openRecording } from '../stages/read/open.js';
import { reduceRecording } from '../pipeline/reduce/compute.js';
import { runReduce } from '../pipeline/run.js';
import { sweepStoppedThreads } from '../stages/read/mat-spool.js';
import { Worker } from 'node:worker_threads';
import { fixture, quernWith, readAll, readJson, tempDir } from './helpers.js';

interface MatFixture { file: string; case: string | null; mat: MatLayout; channel_names: string[] | null; rate: number; channels: number; frames: number; encoding: string; bits: number | null; start_time: string | null; made_by: string; time_steps: { irregular: number; widest_s: number; widest_at_s: number | null; nominal_s: number } | null }
const fixtures: MatFixture[] = readJson(fixture('mat', 'expected.json')).files;
const layout = (l: Partial<MatLayout>): MatLayout => ({ variables: [], channel_axis: null, sample_rate_variable: null, start_time_variable: null, ...l });

/** The samples a fixture's time vector skips, by numpy's count (test/fixtures/make-time-vector-fixtures.py). */
const skipped: Record<string, { samples_lost: number; largest: { samples: number; to_index: number } }> = readJson(fixture('time-vectors', 'expected.json')).mat_dropouts;

/** scipy's samples, per channel, with a NaN for each sample the time vector skips, in its place. */
function expected(f: MatFixture): Float64Array[] {
  const b = readFileSync(fixture('mat', `${f.file}${f.case ? `.${f.case}` : ''}.f64`));
  const all = new Float64Array(b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength));
  const gap = skipped[f.file]?.largest ?? { samples: 0, to_index: f.frames };
  const index = (i: number) => (i < gap.to_index ? i : i >= gap.to_index + gap.samples ? i - gap.samples : -1);
  return Array.from({ length: f.channels }, (_, c) => Float64Array.from({ length: f.frames + gap.samples }, (_, i) => (index(i) < 0 ? NaN : all[index(i) * f.channels + c])));
}

describe('MAT-file reader against scipy.io', () => {
  for (const f of fixtures) {
    it(`reads ${f.file}${f.case ? ` (${f.case})` : ''}: ${f.made_by}`, async () => {
      for (const chunkFrames of [97, 65536, 1]) {
        if (chunkFrames === 1 && f.frames * f.channels > 4000) continue;
        const { rec, channels } = await readAll(fixture('mat', f.file), { mat: f.mat, chunkFrames });
        expect([rec.format, rec.sampleRate, rec.frames, rec.channelCount, rec.encoding, rec.bits, rec.normalised]).toEqual(['mat', f.rate, f.frames, f.channels, f.encoding, f.bits, f.bits != null]);
        expect(rec.startTime?.toISOString() ?? null).toBe(f.start_time);
        expect(rec.channelNames).toEqual(f.channel_names);
        const want = expected(f);
        for (let c = 0; c < f.channels; c++) expect(Float64Array.from(channels[c])).toEqual(want[c]);
        // The time vector's steps against scipy's values: the irregular ones counted, the widest where it is; a step of 11
        // nominal steps is 10 samples lost, read as missing samples, no irregular step.
        if (f.time_steps) {
          const s = rec.timeSteps!, lost = skipped[f.file];
          expect([s.irregular, Number.isNaN(s.widest_at_s) ? null : s.widest_at_s]).toEqual(lost ? [0, null] : [f.time_steps.irregular, f.time_steps.widest_at_s]);
          if (!lost) expect(s.widest_s).toBeCloseTo(f.time_steps.widest_s, 12);
          expect(s.nominal_s).toBeCloseTo(f.time_steps.nominal_s, 12);
          expect(rec.notes).toEqual(lost ? [expect.stringMatching(new RegExp(`^samples lost: variable "t" \\(the time\\) skips ${lost.samples_lost} samples at its nominal step of 1\\.000 ms in 1 gap`))] : []);
        }
      }
    });
  }

  it('a gap in the time vector is a dropout: the flag warns on every channel, naming the samples lost and where', async () => {
    const f = fixtures.find((x) => x.file === 'dropout.mat')!;
    const r = await reduceRecording({ recording: 'dropout.mat', path: fixture('mat', 'dropout.mat'), group: 'g', format: null, sampleRate: null, layout: null, reader: { mat: f.mat }, channels: null, labels: {}, durationS: null, spec: {}, chunkFrames: 256 });
    expect(r.status).toBe('reduced');
    for (const q of r.quality) {
      const flag = q.flags.find((x) => x.name === 'dropout')!;
      expect(flag.severity).toBe('warn');
      // The 10 samples skipped after the one at 0.599 s are missing, the file's own times kept.
      expect(flag.message).toMatch(/^10 samples missing \(0\.99 %\), first at 0\.6 s, the longest gap 0\.01 s ending at 0\.61 s: the logger lost data/);
    }
  });

  it('finds declared channels by the names the file keeps, whatever their order, and refuses a name it does not hold', async () => {
    const f = fixtures.find((x) => x.file === 'named-channels.mat' && !x.case)!;
    const want = expected(f);
    const channel = (name: string) => ({ name, quantity: 'unknown', unit: 'FS', scale: 1, offset: 0, range: null, bits: null, max_frequency_hz: null });
    const job = (names: string[], mat: MatLayout) => ({ recording: f.file, path: fixture('mat', f.file), group: 'cab', format: null, sampleRate: null, layout: null, reader: { mat }, channels: names.map(channel), labels: {}, durationS: null, spec: { statistics: {} }, chunkFrames: 512 });
    // Root mean square, the plain formula over scipy's samples.
    const rms = (x: Float64Array) => Math.sqrt(x.reduce((s, v) => s + v * v, 0) / x.length);
    for (const mat of [f.mat, { ...f.mat, channel_names_variable: 'rows' }]) {
      const r = await reduceRecording(job(['mic_cab', 'acc_x'], mat));
      expect(r.status, r.reason).toBe('reduced');
      expect(r.rows.map((row) => row.channel)).toEqual(['mic_cab', 'acc_x']);
      expect(r.rows[0].rms as number).toBeCloseTo(rms(want[2]), 12);
      expect(r.rows[1].rms as number).toBeCloseTo(rms(want[0]), 12);
    }
    const missing = await reduceRecording(job(['acc_z'], f.mat));
    expect(missing.reason).toBe('header: declared channel "acc_z" is not among the file\'s channel names (acc_x, acc_y, mic_cab); match the names in archive.yaml group "cab" to the file\'s');
    // Without a channel list, the file's names name the channels.
    const undeclared = await reduceRecording({ ...job([], f.mat), channels: null });
    expect(undeclared.rows.map((row) => row.channel)).toEqual(['acc_x', 'acc_y', 'mic_cab']);
  });

  it('refuses channel names that are not one a channel, or not text', async () => {
    const read = (file: string, l: Partial<MatLayout>) => readAll(fixture('mat', file), { mat: layout({ variables: ['data'], channel_axis: 1, sample_rate_variable: 'fs', ...l }) });
    await expect(read('named-channels.mat', { channel_names_variable: 'fs' })).rejects.toThrow(/variable "fs" \(byte \d+, compressed\) is a double array; the channel names are a cell array of text \(\{'acc_x', 'acc_y'\}\) or a char matrix of one name a row; correct mat.channel_names_variable in archive.yaml/);
    await expect(read('named-channels.mat', { channel_names_variable: 'labels' })).rejects.toThrow(/variable "labels" \(the channel names\) is not in the file; the file holds data \(int16 1200 × 3\), fs \(double 1 × 1\), names \(cell 1 × 3\), rows \(char 3 × 7\)/);
    await expect(read('named-channels.mat', { channel_axis: 0, channel_names_variable: 'names' })).rejects.toThrow(/variable "names" \(the channel names\) holds 3 names but the samples have 1200 channels; check the file or mat.channel_names_variable in archive.yaml/);
    await expect(read('named-channels-73.mat', { channel_axis: 0, channel_names_variable: 'names' })).rejects.toThrow(/^version 7.3 MAT-file \(HDF5\): variable "names" \(the channel names\) holds 2 names but the samples have 900 channels/);
    await expect(read('named-channels-73.mat', { channel_names_variable: 'fs' })).rejects.toThrow(/variable "fs" is a double array; the channel names are a cell array of text/);
  });

  it('takes a declared sample rate when no variable holds it', async () => {
    const { rec } = await readAll(fixture('mat', 'rig-columns.mat'), { mat: layout({ variables: ['data'], channel_axis: 1 }), sampleRate: 51200 });
    expect([rec.sampleRate, rec.startTime]).toEqual([51200, null]);
  });

  it('names the variable, what the file holds and where to declare it in its errors', async () => {
    const read = (file: string, l: Partial<MatLayout> | null, rate: number | null = 100) => readAll(fixture('mat', file), { mat: l && layout(l), sampleRate: rate });
    await expect(read('rig-columns.mat', null)).rejects.toThrow(/a MAT-file needs to be told which variables hold the samples; declare mat: .* in its archive.yaml group; the file holds data \(int16 3000 × 4\), fs \(double 1 × 1\), t0 \(char 1 × 20\), note \(char 1 × 19\)/);
    await expect(read('rig-columns.mat', { variables: ['signals'] })).rejects.toThrow(/variable "signals" \(the samples\) is not in the file; the file holds data/);
    await expect(read('rig-columns.mat', { variables: ['data'] })).rejects.toThrow(/variable "data" \(byte 128, compressed\) has two axes \(3000 × 4\); set mat.channel_axis in archive.yaml to 1 if its columns are channels/);
    await expect(read('rig-columns.mat', { variables: ['t0'] })).rejects.toThrow(/variable "t0" \(byte \d+, compressed\) is a char array; the samples must be numbers/);
    await expect(read('rig-columns.mat', { variables: ['data'], channel_axis: 1, sample_rate_variable: 'note' })).rejects.toThrow(/variable "note" \(the sample rate\) holds "test rig B, night 3", not a positive number of Hz/);
    await expect(read('rig-columns.mat', { variables: ['data'], channel_axis: 1, start_time_variable: 'note' })).rejects.toThrow(/variable "note" \(the start time\) holds "test rig B, night 3", neither an ISO 8601 date-time nor POSIX seconds/);
    await expect(read('per-channel.mat', { variables: ['rec.acc_z'] })).rejects.toThrow(/struct "rec" has no field "acc_z" \(its fields: title, fs, acc_x, acc_y\)/);
    await expect(read('per-channel.mat', { variables: ['rec.fs.x'] })).rejects.toThrow(/"rec.fs" is a int64 array, not a struct/);
    await expect(read('rig-rows.mat', { variables: ['signals', 'u'] })).rejects.toThrow(/variable "signals" \(byte 128\) is 3 × 2500; with one variable per channel each must be a vector/);
    await expect(read('rig-rows.mat', { variables: ['u'] }, null)).rejects.toThrow(/no sample rate; set sample_rate for the group in archive.yaml, mat.sample_rate_variable in archive.yaml or mat.time_variable in archive.yaml/);
    await expect(readAll(fixture('formats', 'acq-rows.h5'), { format: 'mat', mat: layout({ variables: ['x'] }) })).rejects.toThrow(/byte 0: an HDF5 file, not a level 5 MAT-file/);
    // Version 7.3: the same messages, in MATLAB's terms.
    const v73 = (l: Partial<MatLayout> | null, rate: number | null = 100) => readAll(fixture('mat', 'rig-columns-73.mat'), { mat: l && layout(l), sampleRate: rate });
    await expect(v73(null)).rejects.toThrow(/^version 7.3 MAT-file \(HDF5\): a MAT-file needs to be told which variables hold the samples; declare mat: .*; the file holds data \(int16 2000 × 3\), fs \(double 1 × 1\), t \(double 2000 × 1\), t0 \(char 1 × 25\)$/);
    await expect(v73({ variables: ['signals'] })).rejects.toThrow(/variable "signals" \(the samples\) is not in the file; the file holds data/);
    await expect(v73({ variables: ['data'] })).rejects.toThrow(/variable "data" has two axes \(2000 × 3\); set mat.channel_axis in archive.yaml to 1 if its columns are channels/);
    await expect(v73({ variables: ['t0'] })).rejects.toThrow(/variable "t0" is a char array; the samples must be numbers/);
    await expect(v73({ variables: ['data'], channel_axis: 1 }, null)).rejects.toThrow(/no sample rate; set sample_rate for the group in archive.yaml, mat.sample_rate_variable in archive.yaml or mat.time_variable in archive.yaml/);
    await expect(readAll(fixture('mat', 'per-channel-73.mat'), { mat: layout({ variables: ['rec'] }), sampleRate: 1 })).rejects.toThrow(/variable "rec" is a struct, not an array; name one of its fields \("rec.field"\)/);
    await expect(readAll(fixture('formats', 'pcm12in16.wav'), { format: 'mat', mat: layout({ variables: ['x'] }) })).rejects.toThrow(/byte 126: no byte-order mark/);
    // Octave's default save writes text under any name (the first line as Octave writes it, from memory).
    const octave = join(tempDir(), 'octave.mat');
    writeFileSync(octave, '# Created by Octave 8.4.0, Sat Dec 05 02:00:00 2026 UTC <lab@rig>\n# name: x\n# type: matrix\n# rows: 2\n# columns: 1\n 1\n 2\n');
    await expect(readAll(octave, { mat: layout({ variables: ['x'] }), sampleRate: 100 })).rejects.toThrow(/^byte 0: Octave's text format, not a MAT-file; save it from Octave with save -mat7-binary/);
  });

  it('level 4 files: what they hold named in errors, no structs, text and sparse refused as samples, cut short or damaged refused', async () => {
    const read = (file: string, l: Partial<MatLayout>) => readAll(file.includes('/') ? file : fixture('mat', file), { mat: layout({ channel_axis: 1, sample_rate_variable: 'fs', ...l }) });
    await expect(read('level4.mat', { variables: ['signals'] })).rejects.toThrow(/variable "signals" \(the samples\) is not in the file; the file holds data \(double 1500 × 3\), fs \(double 1 × 1\), t0 \(text 1 × 20\), names \(text 3 × 7\)/);
    await expect(read('level4.mat', { variables: ['rec.acc_x'] })).rejects.toThrow(/variable "rec.acc_x" \(the samples\): a level 4 MAT-file holds no structs, only matrices/);
    await expect(read('level4.mat', { variables: ['t0'] })).rejects.toThrow(/variable "t0" \(byte \d+, level 4\) is a text matrix; the samples must be numbers/);
    await expect(read('level4.mat', { variables: ['data'], channel_names_variable: 'fs' })).rejects.toThrow(/variable "fs" \(byte \d+, level 4\) is a numeric matrix; the channel names are a text matrix of one name a row/);
    await expect(read('level4.mat', { variables: ['data'], sample_rate_variable: 'names' })).rejects.toThrow(/variable "names" \(byte \d+, level 4\) is a 3 × 7 text matrix; the sample rate is one line of text or one number/);
    const dir = tempDir(), whole = readFileSync(fixture('mat', 'level4.mat'));
    for (const keep of [30, 200, whole.length - 1]) {
      writeFileSync(join(dir, `cut-${keep}.mat`), whole.subarray(0, keep));
      await expect(read(join(dir, `cut-${keep}.mat`), { variables: ['data'] })).rejects.toThrow(/cut short/);
    }
  });

  it('fails with a reason on files cut short or damaged, never a crash', async () => {
    const dir = tempDir();
    const whole = readFileSync(fixture('mat', 'rig-columns.mat'));
    const mat = layout({ variables: ['data'], channel_axis: 1, sample_rate_variable: 'fs' });
    for (const keep of [100, 200, 1000, 20000, whole.length - 1]) {
      const path = join(dir, `cut-${keep}.mat`);
      writeFileSync(path, whole.subarray(0, keep));
      await expect(readAll(path, { mat })).rejects.toThrow(/cut short|runs past the end|ends inside/);
    }
    // A compressed element whose stream is damaged in the middle: zlib's own check finds it.
    const flipped = Buffer.from(whole);
    flipped[5000] ^= 0xff;
    writeFileSync(join(dir, 'flipped.mat'), flipped);
    await expect(readAll(join(dir, 'flipped.mat'), { mat })).rejects.toThrow(/cannot be inflated|damaged/);
  });

  it('names the place of a damaged compressed variable once', async () => {
    const dir = tempDir();
    const flipped = Buffer.from(readFileSync(fixture('mat', 'rig-columns.mat')));
    flipped[5000] ^= 0xff;
    writeFileSync(join(dir, 'flipped.mat'), flipped);
    const message = await readAll(join(dir, 'flipped.mat'), { mat: layout({ variables: ['data'], channel_axis: 1, sample_rate_variable: 'fs' }) }).then(() => '', (e: Error) => e.message);
    expect(message).toMatch(/^the variable at byte 128: its array tag: the compressed data \(\d+ bytes from byte 136\) cannot be inflated/);
    expect(message.split('the variable at byte 128').length).toBe(2);
  });

  it('reads a compressed variable of many columns through one temporary inflated copy, removed when the recording closes', async () => {
    // 300 channels × 2 samples of int8, compressed: a hand-made element as in the format's description.
    const el = (type: number, data: Buffer) => { const t = Buffer.alloc(8); t.writeUInt32LE(type, 0); t.writeUInt32LE(data.length, 4); return Buffer.concat([t, data, Buffer.alloc((8 - (data.length % 8)) % 8)]); };
    const i32 = (...v: number[]) => { const b = Buffer.alloc(4 * v.length); v.forEach((x, i) => b.writeInt32LE(x, 4 * i)); return b; };
    const values = Buffer.from(Int8Array.from({ length: 600 }, (_, i) => (i % 251) - 125).buffer);
    const body = Buffer.concat([el(6, Buffer.from([8, 0, 0, 0, 0, 0, 0, 0])), el(5, i32(2, 300)), el(1, Buffer.from('wide')), el(1, values)]);
    const header = Buffer.concat([Buffer.from('MATLAB 5.0 MAT-file'.padEnd(116, ' ')), Buffer.alloc(8), Buffer.from([0, 1]), Buffer.from('IM')]);
    const path = join(tempDir(), 'wide.mat');
    writeFileSync(path, Buffer.concat([header, el(15, deflateSync(el(14, body)))]));
    const code = (i: number) => ((i % 251) - 125) / 128;
    const tmp = tempDir(), before = process.env.TMPDIR;
    process.env.TMPDIR = tmp;
    try {
      const columns = await readAll(path, { mat: layout({ variables: ['wide'], channel_axis: 1 }), sampleRate: 100 });
      // MATLAB's column order: column c holds values 2c and 2c + 1.
      expect([columns.rec.channelCount, columns.rec.frames, columns.channels[7], columns.channels[299]]).toEqual([300, 2, [code(14), code(15)], [code(598), code(599)]]);
      expect(readdirSync(tmp)).toEqual([]);
      const rows = await readAll(path, { mat: layout({ variables: ['wide'], channel_axis: 0 }), sampleRate: 100 });
      expect([rows.rec.channelCount, rows.rec.frames, rows.channels[1].slice(0, 3)]).toEqual([2, 300, [code(1), code(3), code(5)]]);
      // A recording given up before its samples are read leaves nothing behind either.
      const opened = await openRecording(path, { mat: layout({ variables: ['wide'], channel_axis: 1 }), sampleRate: 100 });
      await opened.chunks().next();
      // Named by its process and thread (the main thread here, id 0), so that a stopped thread's copies can be told apart.
      expect(readdirSync(tmp)).toEqual([expect.stringMatching(new RegExp(`^quern-mat-${process.pid}-t0-`))]);
      await opened.close();
      expect(readdirSync(tmp)).toEqual([]);
      // An array tag that declares less than its stream inflates to: the copy stops there, so damage cannot fill the disk.
      const lying = el(14, body);
      lying.writeUInt32LE(body.length - 100, 4);
      const damaged = join(path, '..', 'lying.mat');
      writeFileSync(damaged, Buffer.concat([header, el(15, deflateSync(lying))]));
      await expect(readAll(damaged, { mat: layout({ variables: ['wide'], channel_axis: 1 }), sampleRate: 100 })).rejects.toThrow(new RegExp(`inflates to more than the ${8 + body.length - 100} bytes its array element declares; the file is damaged`));
      expect(readdirSync(tmp)).toEqual([]);
    } finally {
      if (before == null) delete process.env.TMPDIR; else process.env.TMPDIR = before;
    }
  });
});

describe('channels of different classes', () => {
  // scipy.io.loadmat reads rec.acc_x as float64 and rec.acc_y as float32 (expected.json's read_back); quern holds one class a
  // recording, so it refuses the file naming both variables, their classes and what to do, rather than misjudge a channel.
  it('refuses struct fields of double and single in one recording, saying to save them in one class', async () => {
    const refused = readJson(fixture('mat', 'expected.json')).refused['mixed-classes.mat'];
    expect(refused.read_back).toEqual({ acc_x: 'float64', acc_y: 'float32' });
    await expect(readAll(fixture('mat', 'mixed-classes.mat'), { mat: layout({ variables: ['rec.acc_x', 'rec.acc_y'], sample_rate_variable: 'rec.fs' }) }))
      .rejects.toThrow(/^variable "rec\.acc_y" \(byte \d+, compressed\) is single but variable "rec\.acc_x" \(byte \d+, compressed\) is double; quern reads the channels of one recording in one class \(their encoding, bits and full scale are the recording's\), so they must share one: save them in one class \(in MATLAB, double\(\) or single\(\) on each before saving\)$/);
    // Each field alone reads, as its own class.
    const x = await readAll(fixture('mat', 'mixed-classes.mat'), { mat: layout({ variables: ['rec.acc_y'], sample_rate_variable: 'rec.fs' }) });
    expect([x.rec.encoding, x.rec.frames, x.rec.sampleRate]).toEqual(['float32', 600, 1000]);
  });
});

describe('temporary copies that stopped runs leave', () => {
  it('a run removes the copies of processes no longer running, and leaves those of running ones', () => {
    const tmp = tempDir();
    // A process id above any Linux pid_max (2^22) runs nowhere; this process runs.
    const dead = join(tmp, 'quern-mat-4999999-abc'), alive = join(tmp, `quern-mat-${process.pid}-def`), other = join(tmp, 'quern-mat-notes');
    for (const d of [dead, alive, other]) { mkdirSync(d); writeFileSync(join(d, 'variable'), 'x'); }
    const archive = join(tempDir(), 'archive');
    mkdirSync(archive);
    writeFileSync(join(archive, 'archive.yaml'), 'groups:\n  - { name: m, match: "*.mat", mat: { variables: data, channel_axis: 1, sample_rate_variable: fs } }\n');
    copyFileSync(fixture('mat', 'rig-columns.mat'), join(archive, 'r.mat'));
    const r = quernWith({ TMPDIR: tmp }, 'reduce', archive, '--out', join(archive, '..', 'out'), '--quiet');
    expect(r.code, r.stderr).toBe(0);
    expect(readdirSync(tmp).sort()).toEqual([`quern-mat-${process.pid}-def`, 'quern-mat-notes']);
  });

  it("a thread that was stopped has its copies removed at once; a running thread's and the main thread's are kept", async () => {
    const tmp = tempDir();
    const copy = (thread: number) => `quern-mat-${process.pid}-t${thread}-x`;
    // Two real worker threads: one stopped (as the pool stops a stalled or crashed one), one still running.
    const stopped = new Worker('setInterval(() => {}, 1000)', { eval: true }), running = new Worker('setInterval(() => {}, 1000)', { eval: true });
    try {
      for (const t of [stopped.threadId, running.threadId, 0]) { mkdirSync(join(tmp, copy(t))); writeFileSync(join(tmp, copy(t), 'variable'), 'x'); }
      await stopped.terminate();
      expect(await sweepStoppedThreads([running.threadId], tmp)).toBe(1);
      expect(readdirSync(tmp).sort()).toEqual([copy(0), copy(running.threadId)].sort());
    } finally {
      await running.terminate();
    }
  });

  it('a run removes, once its threads have ended, the copies its own process left (a thread stopped for a stall)', async () => {
    const tmp = tempDir(), before = process.env.TMPDIR;
    const left = join(tmp, `quern-mat-${process.pid}-stalled`);
    mkdirSync(left);
    writeFileSync(join(left, 'variable'), 'x');
    const archive = join(tempDir(), 'archive');
    mkdirSync(archive);
    writeFileSync(join(archive, 'archive.yaml'), 'groups:\n  - { name: m, match: "*.mat", mat: { variables: data, channel_axis: 1, sample_rate_variable: fs } }\n');
    copyFileSync(fixture('mat', 'rig-columns.mat'), join(archive, 'r.mat'));
    process.env.TMPDIR = tmp;
    try {
      const { record } = await runReduce({ archive, out: join(archive, '..', 'out'), jobs: 1 });
      expect(record.counts.reduced).toBe(1);
      expect(readdirSync(tmp)).toEqual([]);
    } finally {
      if (before == null) delete process.env.TMPDIR; else process.env.TMPDIR = before;
    }
  });
});
