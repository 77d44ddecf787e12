// Whole runs over every format, through the command line and the worker pool: the good recordings reduce, the damaged
// ones fail with their reasons, and check and peek read the new formats. Fixtures from make-format-fixtures.py and
// make-mat-fixtures.py.
import { copyFileSync, mkdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { describe, expect, it } from 'vitest';
import { fixture, quern, readJson, tempDir } from './helpers.js';

const DECLARATION = `groups:
  - name: long-term
    match: "flac/*.flac"
    flac: { start_time_tag: START_TIME }
    sample_rate: 51200
  - name: stereo-flac
    match: "flac2/*.flac"
  - name: rig
    match: "h5/*.h5"
    hdf5: { datasets: /acq/signals, channel_axis: 1, sample_rate_attribute: sample_rate, start_time_attribute: start_time }
    channels:
      - { name: acc_x, quantity: acceleration, unit: m/s^2, scale: 500 }
      - { name: acc_y, quantity: acceleration, unit: m/s^2, scale: 500 }
      - { name: acc_z, quantity: acceleration, unit: m/s^2, scale: 500 }
      - { name: mic, quantity: sound_pressure, unit: Pa, scale: 100 }
  - name: converters
    match: "wav/*.wav"
  - name: bench
    match: "mat/*.mat"
    mat: { variables: data, channel_axis: 1, sample_rate_variable: fs, start_time_variable: t0 }
  - name: exports
    match: "csv/*.csv"
`;

function archive(): string {
  const root = join(tempDir(), 'archive');
  for (const d of ['flac', 'flac2', 'h5', 'wav', 'csv', 'mat']) mkdirSync(join(root, d), { recursive: true });
  writeFileSync(join(root, 'archive.yaml'), DECLARATION);
  const put = (name: string, to: string) => copyFileSync(fixture('formats', name), join(root, to));
  put('flac24-3ch.flac', 'flac/run-01.flac');
  put('flac16-2ch.flac', 'flac2/run-02.flac');
  put('acq-rows.h5', 'h5/rig-01.h5');
  put('pcm12in16.wav', 'wav/adc12.wav');
  put('rifx-pcm24.wav', 'wav/rifx.wav');
  put('sf-rf64-pcm16.wav', 'wav/rf64.wav');
  put('sox-mulaw.wav', 'wav/mulaw.wav');
  copyFileSync(fixture('mat', 'rig-columns.mat'), join(root, 'mat/rig-02.mat'));
  writeFileSync(join(root, 'csv', 'export.csv'), 'time,a,b\n' + Array.from({ length: 500 }, (_, i) => `${i / 100},${i % 7},NaN`).join('\n') + '\n');
  // The damaged ones: cut, flipped, lying.
  const cut = (name: string, to: string, keep: number) => { const b = readFileSync(fixture('formats', name)); writeFileSync(join(root, to), b.subarray(0, Math.floor(b.length * keep))); };
  cut('flac16-2ch.flac', 'flac2/cut.flac', 0.6);
  cut('acq-rows.h5', 'h5/cut.h5', 0.5);
  cut('bw64-pcm24.wav', 'wav/cut-bw64.wav', 0.7);
  const mat = readFileSync(fixture('mat', 'rig-columns.mat'));
  writeFileSync(join(root, 'mat/cut.mat'), mat.subarray(0, mat.length >> 1));
  const flipped = Buffer.from(readFileSync(fixture('formats', 'flac16-2ch.flac')));
  flipped[flipped.length - 2000] ^= 0x40;
  writeFileSync(join(root, 'flac2', 'flipped.flac'), flipped);
  const wide = Buffer.from(readFileSync(fixture('formats', 'pcm20in24.wav')));
  wide.writeUInt16LE(60000, wide.indexOf('fmt ') + 10);
  writeFileSync(join(root, 'wav', 'wide.wav'), wide);
  return root;
}

describe('a run over every format', () => {
  it('reduces the good recordings of every format and names each damaged one with its reason', async () => {
    const root = archive(), out = join(root, '..', 'out');
    const r = quern('reduce', root, '--out', out, '--quiet', '--jobs', '2');
    expect(r.code, r.stderr).toBe(1);
    const run = readJson(join(out, 'run.json'));
    const failed = Object.fromEntries((run.recordings as { recording: string; status: string; reason: string }[]).filter((f) => f.status === 'failed').map((f) => [f.recording, f.reason]));
    expect(Object.keys(failed).sort()).toEqual(['flac2/cut.flac', 'flac2/flipped.flac', 'h5/cut.h5', 'mat/cut.mat', 'wav/cut-bw64.wav', 'wav/wide.wav']);
    expect(failed['flac2/cut.flac']).toMatch(/frame \d+ at byte \d+: the file ends inside this frame/);
    expect(failed['flac2/flipped.flac']).toMatch(/frame \d+ at byte \d+: /);
    expect(failed['h5/cut.h5']).toMatch(/HDF5 file cannot be opened|cut short|damaged/);
    expect(failed['wav/cut-bw64.wav']).toMatch(/ends \d+ bytes early/);
    expect(failed['mat/cut.mat']).toMatch(/byte 128: a variable's element of \d+ bytes runs past the end of the file \(\d+ bytes\); the file is cut short/);
    expect(failed['wav/wide.wav']).toMatch(/60000 channels/);
    for (const reason of Object.values(failed)) expect(reason).not.toMatch(/unexpected error/);
    const db = await (await DuckDBInstance.create()).connect();
    const rows = (await db.runAndReadAll(`select recording, channel, n, sample_rate, (start_time at time zone 'UTC')::varchar as start, resolution_bits, n_nonfinite from '${join(out, 'features.parquet')}' order by recording, channel`)).getRowObjectsJson() as Record<string, any>[];
    expect([...new Set(rows.map((x) => x.recording))]).toEqual(['csv/export.csv', 'flac/run-01.flac', 'flac2/run-02.flac', 'h5/rig-01.h5', 'mat/rig-02.mat', 'wav/adc12.wav', 'wav/mulaw.wav', 'wav/rf64.wav', 'wav/rifx.wav']);
    const of = (rec: string) => rows.filter((x) => x.recording === rec);
    expect(of('flac/run-01.flac').map((x) => [Number(x.n), x.start])).toEqual(Array(3).fill([5000, '2026-11-16 22:00:00']));
    expect(of('h5/rig-01.h5').map((x) => x.channel)).toEqual(['acc_x', 'acc_y', 'acc_z', 'mic']);
    expect(of('mat/rig-02.mat').map((x) => [x.channel, Number(x.n), x.sample_rate, x.start])).toEqual([1, 2, 3, 4].map((c) => [`ch${c}`, 3000, 25600, '2026-03-14 02:00:00']));
    // A 12-bit capture in 16-bit containers spans 4095 of its 4096 codes: log2(4095) ≈ 12.0 bits, not 16.
    for (const x of of('wav/adc12.wav')) expect(x.resolution_bits).toBeCloseTo(Math.log2(4095), 6);
    // NaN cells of a CSV count as missing samples.
    expect(of('csv/export.csv').find((x) => x.channel === 'b')!.n_nonfinite).toBe(500);
    // The damaged files left nothing behind in the threads that read them: without them, on one thread, every row is the same.
    for (const bad of Object.keys(failed)) rmSync(join(root, bad));
    const alone = join(root, '..', 'alone');
    expect(quern('reduce', root, '--out', alone, '--quiet', '--jobs', '1').code).toBe(0);
    const differing = async (a: string, b: string) => Number((await db.runAndReadAll(`select count(*) from (select * from '${join(a, 'features.parquet')}' except select * from '${join(b, 'features.parquet')}')`)).getRows()[0][0]);
    expect([await differing(out, alone), await differing(alone, out)]).toEqual([0, 0]);
  });

  it('--since finds a recording\'s start where its group declares it: a FLAC tag, an HDF5 attribute, a MAT-file variable', () => {
    const root = archive();
    // The copies were modified just now; only their declared starts put them in these periods.
    const chosen = (since: string, until: string) => {
      const out = join(tempDir(), 'out');
      quern('reduce', root, '--out', out, '--quiet', '--since', since, '--until', until);
      return (readJson(join(out, 'run.json')).recordings as { recording: string }[]).map((r) => r.recording).sort();
    };
    expect(chosen('2026-03-14', '2026-03-15')).toEqual(['mat/rig-02.mat']);
    expect(chosen('2026-11-16T21:00Z', '2026-11-16T23:00Z')).toEqual(['flac/run-01.flac', 'h5/rig-01.h5']);
  });

  it('check and peek read FLAC, HDF5 and MAT-files like the others', () => {
    const root = archive();
    const c = quern('check', root);
    expect(c.stdout).toMatch(/ok {6}flac\/run-01\.flac {2}\[long-term\] {2}flac flac24, 3 channels/);
    expect(c.stdout).toMatch(/ok {6}h5\/rig-01\.h5 {2}\[rig\] {2}hdf5 int16, 4 channels \(acc_x, acc_y, acc_z, mic\), 51200 Hz/);
    expect(c.stdout).toMatch(/ok {6}mat\/rig-02\.mat {2}\[bench\] {2}mat int16, 4 channels \(ch1, ch2, ch3, ch4\), 25600 Hz, 0\.117 s/);
    // check reads headers only: the cut BW64's header already shows its data missing.
    expect(c.stdout).toMatch(/FAILED {2}wav\/cut-bw64\.wav .*ends \d+ bytes early/);
    const p = quern('peek', fixture('formats', 'acq-columns.h5'), '--dataset', 'data', '--channel-axis', '0', '--sample-rate-attribute', 'fs', '--start-time-attribute', 't0');
    expect(p.code, p.stderr).toBe(0);
    expect(p.stdout).toMatch(/format {6}hdf5 float32/);
    expect(p.stdout).toMatch(/duration {4}1\.250 s \(2500 frames\)/);
    const f = quern('peek', fixture('formats', 'flac24-3ch.flac'), '--start-time-tag', 'START_TIME');
    expect(f.stdout).toMatch(/start {7}2026-11-16T22:00:00\.000Z/);
    const m = quern('peek', fixture('mat', 'rig-rows.mat'), '--variable', 'signals', '--channel-axis', '0', '--sample-rate-variable', 'rate', '--start-time-variable', 'start');
    expect(m.code, m.stderr).toBe(0);
    expect(m.stdout).toMatch(/format {6}mat float32/);
    expect(m.stdout).toMatch(/duration {4}1\.250 s \(2500 frames\)/);
    expect(m.stdout).toMatch(/start {7}2026-03-14T02:00:00\.500Z/);
    // Without --variable, peek names its option and what the file holds.
    const bare = quern('peek', fixture('mat', 'rig-rows.mat'));
    expect(bare.stderr).toMatch(/a MAT-file needs to be told which variables hold the samples; give --variable .*; the file holds signals \(single 3 × 2500\), rate \(int32 1 × 1\), start \(double 1 × 1\), u \(uint8 1 × 256\)/);
  });
});
