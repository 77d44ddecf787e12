// A long recording's windows.parquet through the whole command: 300,000 rows, packed by the stage context, stored raw,
// left in the pack and read back a record batch at a time, written as Parquet and read by DuckDB, equal row for row to
// each window's mean, RMS and peak computed straight from the samples (numpy's x.mean(), sqrt((x**2).mean()),
// abs(x).max() over the window's finite samples; common practice).
import { statSync, writeFileSync, mkdirSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { beforeAll, describe, expect, it } from 'vitest';
import { encodeWav } from '../scripts/wav-file.js';
import { quern, readJson, tempDir } from './helpers.js';

const fs = 1000, seconds = 600, frames = fs * seconds, length = 4; // 4-sample windows: 150,000 a channel

/** Invented demo signals: a tone with a seeded pseudo-random ripple, and a second channel holding missing samples. */
function signals(): Float32Array[] {
  let s = 12345;
  const u = () => ((s = (s * 1103515245 + 12345) % 2147483648) / 2147483648) - 0.5;
  const a = Float32Array.from({ length: frames }, (_, i) => 3 * Math.sin(2 * Math.PI * 7.3 * i / fs) + u());
  const b = Float32Array.from({ length: frames }, (_, i) => 0.2 * Math.cos(2 * Math.PI * 50 * i / fs) - 1 + 0.1 * u());
  // Whole windows missing (they read null), and windows holding some missing samples (their finite samples' figures).
  b.fill(NaN, 40_000, 40_012);
  b[123_457] = NaN;
  b[300_001] = Infinity;
  return [a, b];
}

/** Each window's mean, RMS and peak of its finite samples; null where it has none. */
function windowsOf(x: Float32Array): [number | null, number | null, number | null][] {
  const out: [number | null, number | null, number | null][] = [];
  for (let w = 0; w + length <= x.length; w += length) {
    const finite = [...x.subarray(w, w + length)].filter((v) => Number.isFinite(v));
    if (!finite.length) { out.push([null, null, null]); continue; }
    const mean = finite.reduce((a, v) => a + v, 0) / finite.length;
    out.push([mean, Math.sqrt(finite.reduce((a, v) => a + v * v, 0) / finite.length), Math.max(...finite.map(Math.abs))]);
  }
  return out;
}

const close = (got: unknown, want: number | null, scale: number) =>
  (want === null ? got === null : typeof got === 'number' && Math.abs(got - want) <= 1e-12 * scale);

describe('a long recording\'s windows rows', () => {
  let archive = '', out = '', x: Float32Array[] = [];
  beforeAll(() => {
    archive = tempDir();
    out = join(tempDir(), 'out');
    x = signals();
    mkdirSync(join(archive, 'rec'));
    writeFileSync(join(archive, 'rec', 'long.wav'), encodeWav({ sampleRate: fs, channels: x.map((c) => Float64Array.from(c)), encoding: 'float32' }));
    writeFileSync(join(archive, 'archive.yaml'), 'groups:\n  - name: rec\n    match: "rec/*.wav"\n    channels:\n      - { name: a, quantity: acceleration, unit: m/s^2 }\n      - { name: b, quantity: acceleration, unit: m/s^2 }\n');
    writeFileSync(join(archive, 'reduction.yaml'), `windows: { length_s: ${length / fs} }\n`);
    const r = quern('reduce', archive, '--out', out, '--jobs', '1', '--quiet');
    expect(r.code, r.stderr).toBe(0);
  }, 120_000);

  it('are each window\'s mean, RMS and peak of its finite samples, in order, through Parquet', async () => {
    expect(readJson(join(out, 'run.json')).counts).toMatchObject({ reduced: 1, failed: 0 });
    // Larger than a slice reads into memory (8 MB): the table is read from the pack a record batch at a time.
    expect(statSync(join(out, 'cache', 'entries.pack')).size).toBeGreaterThan(8 << 20);
    const db = await (await DuckDBInstance.create()).connect();
    const rows = (await db.runAndReadAll(`select recording, channel, unit, window_start_s, window_s, mean, rms, peak, speed_rpm from '${join(out, 'windows.parquet')}'`)).getRows();
    expect(rows.length).toBe(2 * frames / length);
    for (const [c, name] of ['a', 'b'].entries()) {
      const want = windowsOf(x[c]);
      const got = rows.filter((r) => r[1] === name);
      expect(got.length).toBe(want.length);
      // Plain comparisons, the first few differing rows reported: 150,000 assertions a channel would take a minute.
      const wrong = got.flatMap((r, w) => (r[0] === 'rec/long.wav' && r[2] === 'm/s^2' && r[3] === w * length / fs && r[4] === length / fs && r[8] === null
        && want[w].every((v, j) => close(r[5 + j], v, 4)) ? [] : [{ window: w, got: r, want: want[w] }]));
      expect(wrong.slice(0, 5)).toEqual([]);
    }
    expect(rows.filter((r) => r[1] === 'b' && r[6] === null).length).toBe(3);
  }, 120_000);

  it('are the same rows when a later run reuses them beside a group it computes afresh', async () => {
    const db = await (await DuckDBInstance.create()).connect();
    const table = async () => (await db.runAndReadAll(`select * exclude (recording) from '${join(out, 'windows.parquet')}'`)).getRows();
    const before = await table();
    writeFileSync(join(archive, 'reduction.yaml'), `windows: { length_s: ${length / fs} }\nspectrum: { segment: 1024 }\n`);
    const r = quern('reduce', archive, '--out', out, '--jobs', '1', '--quiet');
    expect(r.code, r.stderr).toBe(0);
    const line = readJson(join(out, 'run.json')).recordings[0];
    expect(line.reused).toContain('windows');
    expect(line.recomputed).toContain('spectrum');
    const after = await table();
    expect(after.length).toBe(before.length);
    expect(after.findIndex((row, i) => row.some((v, j) => !Object.is(v, before[i][j])))).toBe(-1);
  }, 120_000);
});
