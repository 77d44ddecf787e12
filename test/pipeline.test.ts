// The whole job end to end: the built command line on the sample archive, read back by DuckDB and hyparquet.
import { existsSync, mkdirSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { parquetMetadataAsync, parquetReadObjects } from 'hyparquet';
import { compressors } from 'hyparquet-compressors';
import { beforeAll, describe, expect, it } from 'vitest';
import { fixture, quern, readJson, repo, sampleArchiveCopy, tempDir } from './helpers.js';

async function duck(sql: string) {
  const db = await (await DuckDBInstance.create()).connect();
  return (await db.runAndReadAll(sql)).getRowObjectsJS();
}

describe('quern reduce on the sample archive', () => {
  let archive = '', out = '', run: any, result: ReturnType<typeof quern>;
  beforeAll(() => {
    archive = sampleArchiveCopy();
    out = `${archive}.reduced`;
    result = quern('reduce', archive, '--jobs', '2');
    run = readJson(join(out, 'run.json'));
  });

  it('exits 1 because one planted recording is truncated, and says so on the terminal', () => {
    expect(result.code).toBe(1);
    expect(result.stdout).toMatch(/10 of 11 recordings reduced \(37 channel rows\)/);
    expect(result.stdout).toMatch(/FAILED\s+nightly\/2026-11-22\/pump-endurance\.wav: .*cut short/);
    expect(result.stdout).toMatch(/UNMATCHED\s+nightly\/2026-11-19\/pump-endurance-retake\.wav/);
  });

  it('writes run.json with what was scanned, reduced, failed and unmatched', () => {
    expect(run.counts).toMatchObject({ scanned: 11, reduced: 10, failed: 1, unmatched: 1, rows: 37 });
    const failed = run.recordings.filter((r: any) => r.status === 'failed');
    expect(failed.map((r: any) => r.recording)).toEqual(['nightly/2026-11-22/pump-endurance.wav']);
    expect(failed[0].rows).toBe(0);
    expect(run.spec.source).toBe('(default)');
    expect(run.timings.total_s).toBeGreaterThan(0);
  });

  it('DuckDB reads features.parquet with the statistics scipy/numpy compute for the same files', async () => {
    const ref = readJson(fixture('sample-archive-stats.json'));
    const rows = await duck(`select * from '${join(out, 'features.parquet')}' order by recording, channel`);
    expect(rows.length).toBe(37);
    const channelsOf: Record<string, string[]> = { nightly: ['acc_de', 'acc_nde', 'mic', 'pressure', 'tacho'], quicklook: ['acc_de'] };
    for (const r of ref.rows) {
      const name = channelsOf[r.recording.split('/')[0]][r.channel_index];
      const row = rows.find((x: any) => x.recording === r.recording && x.channel === name)!;
      expect(row, `${r.recording} ${name}`).toBeDefined();
      expect(Number(row.n)).toBe(r.n);
      expect(row.sample_rate).toBe(r.sample_rate);
      for (const k of ['mean', 'std', 'rms', 'min', 'max']) expect(row[k] as number).toBeCloseTo(r[k], 9);
      if (r.kurtosis === null) expect(row.kurtosis).toBeNull();
      else {
        expect(Math.abs((row.kurtosis as number) - r.kurtosis) / r.kurtosis).toBeLessThan(1e-9);
        expect(row.skewness as number).toBeCloseTo(r.skewness, 8);
      }
    }
  });

  it('carries labels, start times and derived columns', async () => {
    const [row] = await duck(`select * from '${join(out, 'features.parquet')}' where recording = 'nightly/2026-11-19/pump-endurance.wav' and channel = 'acc_de'`);
    expect(row).toMatchObject({ group: 'nightly', quantity: 'acceleration', unit: 'm/s^2', rig: 'P3', test_id: 'endurance-07', duration_s: 4 });
    expect((row.start_time as Date).toISOString()).toBe('2026-11-19T02:00:00.000Z');
    expect(row.peak).toBe(500); // clipped at the instrument range
    expect(row.crest_factor as number).toBeCloseTo((row.peak as number) / (row.rms as number), 12);
    const [csv] = await duck(`select sample_rate, n, start_time from '${join(out, 'features.parquet')}' where recording like 'handheld/%' limit 1`);
    expect(csv).toMatchObject({ sample_rate: 2560, start_time: null });
  });

  it('stores tool version, spec hash, run id and units in the file metadata', async () => {
    const kv = Object.fromEntries((await duck(`select decode(key) k, decode(value) v from parquet_kv_metadata('${join(out, 'features.parquet')}')`)).map((r: any) => [r.k, r.v]));
    expect(kv['quern.version']).toBe(JSON.parse(readFileSync(join(__dirname, '..', 'package.json'), 'utf8')).version);
    expect(kv['quern.spec_hash']).toBe(run.spec.hash);
    expect(kv['quern.run_id']).toBe(run.run_id);
    expect(JSON.parse(kv['quern.units'])).toMatchObject({ sample_rate: 'Hz', duration_s: 's', rms: '[unit]', kurtosis: '1' });
  });

  it('a second, independent reader (hyparquet) finds the same rows, and the Arrow field metadata with units', async () => {
    const bytes = readFileSync(join(out, 'features.parquet'));
    const file = bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength);
    const objs = await parquetReadObjects({ file, compressors });
    const rows = await duck(`select recording, channel, rms from '${join(out, 'features.parquet')}'`);
    expect(objs.length).toBe(rows.length);
    for (const r of rows) expect(objs.find((o: any) => o.recording === r.recording && o.channel === r.channel)!.rms).toBe(r.rms);
    const meta = await parquetMetadataAsync(file);
    const arrowSchema = meta.key_value_metadata?.find((k) => k.key === 'ARROW:schema');
    expect(arrowSchema).toBeDefined();
    expect(Buffer.from(arrowSchema!.value!, 'base64').toString('latin1')).toContain('[unit]');
  });

  it('writes the default feature groups, and windows.parquet, with units (bearing defect rate seen in the envelope)', async () => {
    const f = join(out, 'features.parquet');
    const [row] = await duck(`select * from '${f}' where recording = 'nightly/2026-11-21/pump-endurance.wav' and channel = 'acc_de'`);
    for (const c of ['band_20_200_rms', 'oct3_31p5_rms', 'oct1_1000_rms', 'velocity_10_1000_rms', 'dominant_frequency', 'spectral_centroid', 'max_twrms_125ms', 'max_twrms_1000ms', 'mtvv', 'filtered_rms', 'env_mean', 'env_rms', 'env_peak', 'env_dominant_frequency']) {
      expect(typeof row[c], c).toBe('number');
    }
    // The demo's outer-race defect rings at 3.58 × 49.5 Hz ≈ 177.2 Hz; the envelope spectrum resolves 12800/4096 Hz.
    expect(Math.abs((row.env_dominant_frequency as number) - 177.21)).toBeLessThanOrEqual(12800 / 4096);
    // Above Nyquist (6.4 kHz): empty, and said in run.json.
    expect(row.oct3_8000_rms).toBeNull();
    expect(run.recordings.find((r: any) => r.recording === 'nightly/2026-11-21/pump-endurance.wav').messages.join()).toMatch(/reach above the Nyquist frequency 6400 Hz/);
    const units = JSON.parse((await duck(`select decode(value) v from parquet_kv_metadata('${f}') where decode(key) = 'quern.units'`))[0].v as string);
    expect(units).toMatchObject({ velocity_10_1000_rms: 'mm/s', dominant_frequency: 'Hz', band_20_200_ms: '[unit]^2', env_rms: '[unit]' });
    const w = await duck(`select recording, channel, count(*)::int n, min(window_s) ws from '${join(out, 'windows.parquet')}' group by all order by all`);
    expect(w.find((r: any) => r.recording === 'nightly/2026-11-16/pump-endurance.wav' && r.channel === 'mic')).toMatchObject({ n: 4, ws: 1 });
  });

  it('gives the microphone sound levels and the strain gauges rainflow figures, and DuckDB reads cycles.parquet', async () => {
    const f = join(out, 'features.parquet');
    const rows = await duck(`select * from '${f}' where channel in ('mic', 'strain_a', 'strain_b', 'acc_de') order by recording, channel`);
    const sound = ['laeq', 'lceq', 'lzeq', 'lafmax', 'lasmax', 'lcpeak', 'a_filter_deviation_db', 'c_filter_deviation_db', 'oct3_315_db'];
    const fatigue = ['cycles_total', 'range_max', 'damage_equivalent_range'];
    for (const row of rows) {
      for (const c of sound) expect(typeof row[c], `${row.channel} ${c}`).toBe(row.channel === 'mic' ? 'number' : 'object');
      for (const c of fatigue) expect(typeof row[c], `${row.channel} ${c}`).toBe(String(row.channel).startsWith('strain') ? 'number' : 'object');
    }
    const mic = rows.find((r: any) => r.channel === 'mic')!;
    // The demo microphone: a 0.6 Pa vane-pass tone at 297 Hz and 0.2 Pa RMS of broadband noise, about 87.4 dB unweighted.
    expect(mic.lzeq as number).toBeCloseTo(10 * Math.log10((0.6 ** 2 / 2 + 0.2 ** 2) / 20e-6 ** 2), 0);
    expect(mic.laeq as number).toBeLessThan(mic.lzeq as number);
    expect(mic.a_filter_deviation_db as number).toBeLessThan(0.3); // the digital A weighting at 12.8 kHz
    const units = JSON.parse((await duck(`select decode(value) v from parquet_kv_metadata('${f}') where decode(key) = 'quern.units'`))[0].v as string);
    expect(units).toMatchObject({ laeq: 'dB re 20 µPa', lcpeak: 'dB re 20 µPa', oct3_315_db: 'dB re 20 µPa', cycles_total: '1', damage_equivalent_range: '[unit]' });
    const cycles = await duck(`select channel, unit, sum(count) n, max(range) r from '${join(out, 'cycles.parquet')}' group by all order by channel`);
    expect(cycles.map((c: any) => c.channel)).toEqual(['strain_a', 'strain_b']);
    for (const c of cycles) {
      const row = rows.find((r: any) => r.channel === c.channel)!;
      expect(c.unit).toBe('µm/m');
      expect(c.n).toBe(row.cycles_total);
      expect(c.r).toBe(row.range_max);
    }
  });

  it('leaves no temporary files behind', () => {
    expect(readdirSync(out).sort()).toEqual(['cache', 'cycles.parquet', 'features.parquet', 'outputs.json', 'quality.html', 'quality.json', 'run.json', 'spectra.parquet', 'trends.parquet', 'windows.parquet']);
    const all = readdirSync(out, { recursive: true }) as string[];
    expect(all.filter((f) => f.endsWith('.tmp'))).toEqual([]);
  });

  it('removes spectra.parquet and trends.parquet when the spec drops their sections, and writes them again when they return', async () => {
    const spectra = join(out, 'spectra.parquet'), before = await duck(`select count(*)::int n, bit_xor(hash(recording, channel, unit, frequency_hz, density))::varchar h from '${spectra}'`);
    const spec = join(tempDir(), 'statistics.yaml');
    writeFileSync(spec, 'statistics: {}\n');
    expect(quern('reduce', archive, '--spec', spec, '--jobs', '1', '--quiet').code).toBe(1);
    expect(readdirSync(out).filter((f) => f.endsWith('.parquet')).sort()).toEqual(['cycles.parquet', 'features.parquet', 'windows.parquet']);
    expect(quern('reduce', archive, '--jobs', '1', '--quiet').code).toBe(1);
    expect(await duck(`select count(*)::int n, bit_xor(hash(recording, channel, unit, frequency_hz, density))::varchar h from '${spectra}'`)).toEqual(before);
    expect(before[0].n).toBeGreaterThan(1000);
  });
});

describe('bad input never sinks the run', () => {
  it('a corrupt recording fails alone, with a reason, and has no rows', async () => {
    const archive = sampleArchiveCopy();
    writeFileSync(join(archive, 'nightly', '2026-11-17', 'pump-endurance.wav'), Buffer.from('RIFF\x10\x00\x00\x00WAVEjunkjunkjunk', 'latin1'));
    const r = quern('reduce', archive, '--out', join(archive, '..', 'out'), '--quiet');
    expect(r.code).toBe(1);
    const run = readJson(join(archive, '..', 'out', 'run.json'));
    expect(run.counts.failed).toBe(2);
    const bad = run.recordings.find((x: any) => x.recording === 'nightly/2026-11-17/pump-endurance.wav');
    expect(bad.reason).toMatch(/no fmt chunk/);
    const rows = await duck(`select count(*)::int c from '${join(archive, '..', 'out', 'features.parquet')}' where recording = 'nightly/2026-11-17/pump-endurance.wav'`);
    expect(rows[0].c).toBe(0);
  });

  it('a header that disagrees with the declaration fails that recording and says which to fix', () => {
    const archive = sampleArchiveCopy();
    const yaml = readFileSync(join(archive, 'archive.yaml'), 'utf8').replace('sample_rate: 2000', 'sample_rate: 2048');
    writeFileSync(join(archive, 'archive.yaml'), yaml);
    const r = quern('reduce', archive, '--quiet');
    expect(r.stdout).toMatch(/quicklook\/2026-11-18_quicklook\.wav: header: the file says 2000 Hz but group "quick-look" declares 2048 Hz/);
  });

  it('an invalid key in one group sets that group\'s recordings aside, file and line named, and the other groups are reduced: exit 1', () => {
    const archive = sampleArchiveCopy();
    writeFileSync(join(archive, 'archive.yaml'), readFileSync(join(archive, 'archive.yaml'), 'utf8').replace('sample_rate: 12800', 'sample_rate: fast'));
    const r = quern('reduce', archive);
    expect(r.code).toBe(1);
    expect(r.stdout).toMatch(/DECLARED group nightly \(archive\.yaml line 4\) is broken: .*archive\.yaml:6: groups\[0\]\.sample_rate: must be number/);
    const run = readJson(join(`${archive}.reduced`, 'run.json'));
    expect(run.recordings.filter((x: any) => x.group === 'nightly')).toEqual([]);
    expect(run.broken_groups).toEqual([{ group: 'nightly', line: 4, problems: [expect.stringMatching(/archive\.yaml:6: groups\[0\]\.sample_rate: must be number/)], recordings: expect.any(Number) }]);
    expect(run.broken_groups[0].recordings).toBeGreaterThan(0);
    expect(run.recordings.filter((x: any) => x.group !== 'nightly' && x.status === 'reduced').length).toBeGreaterThan(0);
  });

  it('a missing archive is unusable input: exit 2', () => {
    const r = quern('reduce', '/nonexistent/archive');
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/no such archive folder/);
  });

  it('a --jobs that is no whole number of threads is a usage error: exit 2, nothing written', () => {
    const archive = sampleArchiveCopy();
    for (const jobs of ['x', '0', '1.5']) {
      const r = quern('reduce', archive, '--jobs', jobs, '--quiet');
      expect(r.code).toBe(2);
      expect(r.stderr).toMatch(/--jobs takes a whole number of worker threads/);
    }
    expect(existsSync(`${archive}.reduced`)).toBe(false);
  });
});

describe('quern check and quern peek', () => {
  it('check lists what would be reduced and computes nothing', () => {
    const archive = sampleArchiveCopy();
    const r = quern('check', archive);
    expect(r.code).toBe(1);
    expect(r.stdout).toMatch(/ok\s+nightly\/2026-11-16\/pump-endurance\.wav\s+\[nightly\]\s+wav pcm16, 5 channels \(acc_de, acc_nde, mic, pressure, tacho\), 12800 Hz, 4\.000 s, starts 2026-11-16T02:00:00\.000Z$/m);
    // Where a --since period places each recording: its own start (the Broadcast Wave origination here), else its modification time.
    expect(r.stdout).toMatch(/ok\s+handheld\/2026-11-20_spot-check\.csv .*, no start in the file \(a period goes by its modification time\)$/m);
    expect(r.stdout).toMatch(/FAILED\s+nightly\/2026-11-22/);
    expect(r.stdout).toMatch(/10 of 11 recordings would be reduced; 1 failed, 1 unmatched/);
    expect(existsSync(`${archive}.reduced`)).toBe(false);
    expect(r.stdout).not.toMatch(/^NOTE/m);
  });

  it('check names trend restarts and per-channel limits that name no channel of the recordings, before any night is run', () => {
    const archive = sampleArchiveCopy(), spec = join(archive, 'reduction.yaml');
    writeFileSync(spec, readFileSync(join(repo, 'schemas', 'reduction.default.yaml'), 'utf8').replace(/^trends: \{\}.*$/m,
      'trends: { baseline: { first: 3, restart: [{ channel: acc_de, from: 2026-11-18 }, { channel: acc_nd, from: 2026-11-18 }] }, limits: { rms: [{ channel: "acc_*", alarm: 60 }, { channel: pressure, group: handheld, warn: 8 }] } }'));
    const r = quern('check', archive);
    expect(r.code).toBe(1); // the planted truncated recording; notes change no exit code
    expect(r.stdout.split('\n').filter((l) => l.startsWith('NOTE'))).toEqual([
      'NOTE    trends.baseline.restart acc_nd from 2026-11-18 names no channel of these recordings; check its channel and group',
      'NOTE    trends.limits rms[1] (channel pressure, group handheld) names no channel of these recordings, so it could never be reached; check its channel and group',
    ]);
  });

  it('peek shows the header and statistics, using the archive declaration', () => {
    const archive = sampleArchiveCopy();
    const r = quern('peek', join(archive, 'strain', '2026-11-17_frame-strain.bin'));
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/format\s+raw int16, 16-bit/);
    expect(r.stdout).toMatch(/duration\s+20\.000 s \(10000 frames\)/);
    expect(r.stdout).toMatch(/declared by .*group "frame-strain"/);
    expect(r.stdout).toMatch(/strain_a\s+µm\/m/);
    // An option given replaces the group's own setting, and the header says which.
    const given = quern('peek', join(archive, 'strain', '2026-11-17_frame-strain.bin'), '--sample-rate', '1000');
    expect(given.stdout).toMatch(/declared by .*group "frame-strain"\), with the sample rate from the command line instead of the group's/);
  });

  it('peek works on a bare file in stored units', () => {
    const r = quern('peek', fixture('wav', 'pcm16-2ch.wav'));
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/ch1\s+FS/);
    expect(r.stdout).toMatch(/no archive\.yaml/);
  });

  it('peek names its own options for what a file cannot say, and a folder as a slip of the command', () => {
    const dir = tempDir();
    writeFileSync(join(dir, 'capture.xyz'), 'not a recording');
    const unknown = quern('peek', join(dir, 'capture.xyz'));
    // A missing option is a usage error (exit code 2, README's table), not a recording that failed.
    expect(unknown.code).toBe(2);
    expect(unknown.stderr).toContain('cannot tell the format from the extension ".xyz"; give it with --format wav, flac, hdf5, mat, csv or raw');
    const raw = quern('peek', join(dir, 'capture.xyz'), '--format', 'raw');
    expect(raw.code).toBe(2);
    expect(raw.stderr).toContain('raw binary needs its layout and sample rate; give it with --sample-type, --channels and --sample-rate');
    const folder = quern('peek', dir);
    expect(folder.code).toBe(2);
    expect(folder.stderr).toContain(`${dir} is a folder: peek shows one recording, so name a file in it; quern check ${dir} goes through a whole archive`);
    for (const r of [unknown, raw, folder]) expect(r.stderr).not.toContain('archive.yaml');
  });

  it('reduce still says where in archive.yaml to declare a format it cannot tell', () => {
    const archive = sampleArchiveCopy();
    writeFileSync(join(archive, 'archive.yaml'), readFileSync(join(archive, 'archive.yaml'), 'utf8') + '  - name: odd\n    match: "odd/*"\n');
    mkdirSync(join(archive, 'odd'));
    writeFileSync(join(archive, 'odd', 'capture.xyz'), 'not a recording');
    const r = quern('check', archive);
    expect(r.stdout).toMatch(/FAILED\s+odd\/capture\.xyz\s+\[odd\]\s+cannot tell the format from the extension "\.xyz"; declare format: wav, flac, hdf5, mat, csv or raw for its group in archive\.yaml/);
  });

  it('peek names its own options for what a CSV or HDF5 file lacks, where reduce and check name archive.yaml', () => {
    const dir = tempDir(), h5 = join(dir, 'acq.h5');
    writeFileSync(join(dir, 'bare.csv'), 'a,b\n' + '1,2\n'.repeat(50));
    writeFileSync(join(dir, 'timed.csv'), 'time,a\n' + Array.from({ length: 50 }, (_, i) => `${i / 100},${i % 3}`).join('\n') + '\n');
    writeFileSync(h5, readFileSync(fixture('formats', 'acq-columns.h5'))); // h5py 3.7: "data" (channels × samples), attributes fs and t0
    const peek = (...a: string[]) => quern('peek', ...a).stderr;
    const said = [
      [peek(join(dir, 'bare.csv')), 'no sample rate given; set --sample-rate or export the time column'],
      [peek(fixture('wav', 'pcm16-2ch.wav'), '--sample-rate', '1000'), 'the file says 8000 Hz but group "(none)" declares 1000 Hz; correct --sample-rate or move the file to the right group'],
      [peek(join(dir, 'timed.csv'), '--sample-rate', '50'), 'the time column steps at 100.000 Hz but the declaration says 50 Hz; correct --sample-rate or check the export'],
      [peek(h5), 'HDF5 needs to be told where its samples are; give --dataset'],
      [peek(h5, '--dataset', 'nowhere'), 'dataset "nowhere" is not in the file; the file holds /data (3 × 2500); check --dataset'],
      [peek(h5, '--dataset', 'data'), 'set --channel-axis to 0 if its rows are channels, 1 if its columns are'],
      [peek(h5, '--dataset', 'data', '--channel-axis', '0'), 'no sample rate; set --sample-rate, --sample-rate-attribute, --sample-rate-dataset or --time-dataset'],
      [peek(h5, '--dataset', 'data', '--channel-axis', '0', '--sample-rate-attribute', 'rate'), 'attribute "rate" (the sample rate) is not on dataset "data" or its groups; correct --sample-rate-attribute or check the file'],
      [peek(h5, '--dataset', 'data', '--channel-axis', '0', '--sample-rate-attribute', 'fs', '--start-time-attribute', 'start'), 'correct --start-time-attribute or check the file'],
    ];
    for (const [stderr, message] of said) {
      expect(stderr).toContain(message);
      expect(stderr).not.toContain('archive.yaml');
    }
    // The same files in an archive: reduce and check point to the group's keys in archive.yaml.
    mkdirSync(join(dir, 'csv'));
    writeFileSync(join(dir, 'csv', 'bare.csv'), readFileSync(join(dir, 'bare.csv')));
    writeFileSync(join(dir, 'archive.yaml'), 'groups:\n  - { name: h5, match: "*.h5", hdf5: { datasets: data, sample_rate_attribute: fs } }\n  - { name: csv, match: "csv/*.csv" }\n');
    const check = quern('check', dir).stdout;
    expect(check).toContain('no sample rate given; set sample_rate for the group in archive.yaml or export the time column');
    expect(check).toContain('set hdf5.channel_axis in archive.yaml to 0 if its rows are channels, 1 if its columns are');
  });

  it('--help documents the commands and exit codes', () => {
    const r = quern('--help');
    expect(r.stdout).toMatch(/reduce <archive>/);
    expect(r.stdout).toMatch(/check <archive>/);
    expect(r.stdout).toMatch(/peek <recording>/);
    expect(r.stdout).toMatch(/Exit codes: 0 every recording reduced; 1 some recordings failed/);
  });
});
