// Late arrivals: an older night copied into the archive after the nightly runs that covered its dates. Reference: the
// README's promise that two output folders over the same archive give the same trends as a fresh run's, checked row for row
// against a fresh run without --since; the baseline rule (the first 3 usable recordings by start time) is the README's own.
import { mkdirSync, renameSync, rmSync, utimesSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { describe, expect, it } from 'vitest';
import { encodeWav } from '../scripts/wav-file.js';
import { quern, readJson, tempDir } from './helpers.js';

const FS = 12800;

/** Night n's recording, starting 2026-11-n 02:00 UTC (bext): a 400 Hz tone and seeded noise, a little louder each night from the 2nd; night 1 half as loud, so it moves any baseline it joins. */
function night(n: number): Buffer {
  let a = 3000 + n;
  const u = () => { a = (a + 0x6d2b79f5) >>> 0; let t = Math.imul(a ^ (a >>> 15), a | 1); t ^= t + Math.imul(t ^ (t >>> 7), t | 61); return ((t ^ (t >>> 14)) >>> 0) / 4294967296; };
  const gain = n === 1 ? 0.5 : 1 + 0.1 * n;
  const x = new Float64Array(FS / 2);
  for (let i = 0; i < x.length; i++) x[i] = gain * (0.6 * Math.sin(2 * Math.PI * 400 * i / FS) + 0.2 * Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u())) / 10;
  return encodeWav({ sampleRate: FS, channels: [x], origination: new Date(Date.UTC(2026, 10, n, 2)) });
}
const name = (n: number) => `rig/2026-11-${String(n).padStart(2, '0')}.wav`;
const day = (n: number) => `2026-11-${String(n).padStart(2, '0')}`;

const DECLARATION = `groups:
  - name: rig
    match: "rig/*.wav"
    sample_rate: ${FS}
    channels:
      - { name: acc, quantity: acceleration, unit: m/s^2, scale: 200, range: [-200, 200], bits: 16, max_frequency_hz: 5000 }
`;
const SPEC = `statistics: {}
trends: { features: [rms, peak], baseline: { first: 3 } }
`;

/** An archive holding the nights given, its spec beside it. */
function archiveOf(nights: number[]) {
  const root = tempDir(), archive = join(root, 'archive');
  mkdirSync(join(archive, 'rig'), { recursive: true });
  writeFileSync(join(archive, 'archive.yaml'), DECLARATION);
  writeFileSync(join(archive, 'reduction.yaml'), SPEC);
  for (const n of nights) writeFileSync(join(archive, name(n)), night(n));
  return { root, archive, add: (n: number) => writeFileSync(join(archive, name(n)), night(n)) };
}

async function rows(sql: string): Promise<Record<string, unknown>[]> {
  const db = await (await DuckDBInstance.create()).connect();
  return (await db.runAndReadAll(sql)).getRowObjectsJson() as Record<string, unknown>[];
}
const trendRows = (out: string, where = 'true') => rows(`select * from '${out}/trends.parquet' where ${where} order by all`);
const reduce = (archive: string, out: string, ...more: string[]) => quern('reduce', archive, '--out', out, '--jobs', '1', ...more);

describe('a night copied into the archive after the nightly runs that covered its dates', () => {
  it('is reduced by the next --since run into the trends\' history, as a fresh whole run holds it, and kept out of the period\'s tables', async () => {
    const { root, archive, add } = archiveOf([2, 3, 4]), out = join(root, 'out'), fresh = join(root, 'fresh');
    expect(reduce(archive, out, '--since', day(2)).code).toBe(0);
    // Night 5 comes as usual; night 1 is copied in only now, after the runs that covered its date.
    add(5);
    add(1);
    const r = reduce(archive, out, '--since', day(5), '--log', 'json');
    expect(r.code).toBe(0);
    expect(JSON.parse(r.stderr.trim().split('\n').at(-1)!)).toMatchObject({ event: 'summary', late_arrivals: { count: 1, reduced: true, failed: 0 } });
    expect(r.stdout).toContain("  LATE    1 late arrival (a recording starting before this period that came in after the previous run, started 2026-11-01T02:00:00.000Z): reduced for the trends' history, and kept out of this period's tables; named on every --since run until a run's tables hold it: run once without --since, or with --since 2026-11-01T02:00:00.000Z or earlier, to put it in the tables; see run.json (period.late_arrivals)");
    const run = readJson(join(out, 'run.json'));
    expect(run.period.late_arrivals).toEqual({
      count: 1, earliest_start: '2026-11-01T02:00:00.000Z', latest_start: '2026-11-01T02:00:00.000Z', reduced: true, failed: 0,
      recordings: [{ recording: name(1), group: 'rig', start_time: '2026-11-01T02:00:00.000Z', status: 'reduced' }],
    });
    // The period's tables and lines hold the period's recording alone.
    expect(run.counts.selected).toBe(1);
    expect(run.recordings.map((x: any) => x.recording)).toEqual([name(5)]);
    expect((await rows(`select distinct recording from '${out}/features.parquet'`)).map((x) => x.recording)).toEqual([name(5)]);

    // A fresh run without --since over the same archive: night 5's rows of trends.parquet are the same, value for value.
    expect(reduce(archive, fresh, '--quiet').code).toBe(0);
    const nightly = await trendRows(out);
    expect(nightly.length).toBe(2);
    expect(nightly).toEqual(await trendRows(fresh, `recording = '${name(5)}'`));
    // The quiet night 1 is among the first 3 by start time, so night 5's baseline is the median of nights 1–3, not of 2–4.
    const rms = Object.fromEntries((await rows(`select recording, rms from '${fresh}/features.parquet'`)).map((x) => [x.recording, Number(x.rms)]));
    const median3 = (a: number[]) => [...a].sort((p, q) => p - q)[1];
    expect(Number(nightly.find((x) => x.feature === 'rms')!.baseline)).toBe(median3([1, 2, 3].map((n) => rms[name(n)])));
    expect(median3([1, 2, 3].map((n) => rms[name(n)]))).not.toBe(median3([2, 3, 4].map((n) => rms[name(n)])));

    // The night after, nothing new: no late arrival, nothing computed; night 1 is named again, as in no period's tables yet.
    const again = reduce(archive, out, '--since', day(5));
    expect(again.code).toBe(0);
    expect(again.stdout).toMatch(/  LATE    1 late arrival found by earlier runs \(started 2026-11-01T02:00:00\.000Z; rig\/2026-11-01\.wav\) is in no period's tables yet/);
    const quiet = readJson(join(out, 'run.json'));
    expect(quiet.period.late_arrivals).toMatchObject({ count: 0, earliest_start: null, latest_start: null, recordings: [] });
    expect(quiet.counts.recomputed).toBe(0);
    expect(await trendRows(out)).toEqual(nightly);
  }, 120_000);

  it('is only what came in after the previous run looked: a first --since run into a new folder reduces its period alone, and so does the next', async () => {
    const { root, archive, add } = archiveOf([1, 2, 3, 4]), out = join(root, 'out');
    // A new output folder: the earlier nights are there, and left out as the period asks (the baselines say so).
    const first = reduce(archive, out, '--since', day(4));
    expect(first.code).toBe(0);
    expect(first.stdout).not.toMatch(/LATE/);
    expect(first.stdout).toMatch(/baselines forming from this period only/);
    expect(readJson(join(out, 'run.json')).period.late_arrivals.count).toBe(0);
    // The next night: nights 1–3 were there when the first run looked, so they are no late arrivals; night 5 is the period's.
    add(5);
    const next = reduce(archive, out, '--since', day(5));
    expect(next.code).toBe(0);
    expect(next.stdout).not.toMatch(/LATE/);
    const run = readJson(join(out, 'run.json'));
    expect(run.period.late_arrivals.count).toBe(0);
    expect(run.counts.recomputed).toBe(1);
  }, 120_000);

  it('is found when its folder is moved in whole (its files keep their change times), and by shards after a whole run', async () => {
    const { root, archive } = archiveOf([2, 3, 4]), out = join(root, 'out'), fresh = join(root, 'fresh');
    writeFileSync(join(archive, 'archive.yaml'), DECLARATION.replace('"rig/*.wav"', '"rig/**/*.wav"'));
    // Night 1 waits in a folder outside the archive, written before the first run looks; a rename moves it in whole later.
    mkdirSync(join(root, 'incoming', 'n01'), { recursive: true });
    writeFileSync(join(root, 'incoming', 'n01', 'night.wav'), night(1));
    expect(reduce(archive, out, '--quiet').code).toBe(0);
    renameSync(join(root, 'incoming', 'n01'), join(archive, 'rig', 'n01'));
    writeFileSync(join(archive, name(5)), night(5));
    const r = reduce(archive, out, '--since', day(5));
    expect(r.code).toBe(0);
    expect(readJson(join(out, 'run.json')).period.late_arrivals).toMatchObject({ count: 1, reduced: true, recordings: [{ recording: 'rig/n01/night.wav', status: 'reduced' }] });
    expect(reduce(archive, fresh, '--quiet').code).toBe(0);
    expect(await trendRows(out)).toEqual(await trendRows(fresh, `recording = '${name(5)}'`));

    // The nightly job moves to shards: night 0, written keeping an old modification time, is found by the shard whose share it is, from the
    // whole run's mark, and merge holds the history a fresh run holds.
    writeFileSync(join(archive, name(6)), night(6));
    writeFileSync(join(archive, name(0)), night(0));
    utimesSync(join(archive, name(0)), new Date(Date.UTC(2026, 9, 31, 3)), new Date(Date.UTC(2026, 9, 31, 3)));
    for (const k of [1, 2]) expect(quern('reduce', archive, '--out', out, '--shard', `${k}/2`, '--jobs', '1', '--quiet', '--since', day(6)).code).toBe(0);
    const m = quern('merge', out, '--jobs', '1');
    expect(m.code).toBe(0);
    expect(readJson(join(out, 'run.json')).period.late_arrivals).toMatchObject({ count: 1, reduced: true, recordings: [{ recording: name(0), status: 'reduced' }] });
    rmSync(fresh, { recursive: true, force: true });
    expect(reduce(archive, fresh, '--quiet').code).toBe(0);
    expect(await trendRows(out)).toEqual(await trendRows(fresh, `recording = '${name(6)}'`));
  }, 180_000);

  it('with --until, is named with what to run, not reduced; a run with --since alone then reduces it', async () => {
    const { root, archive, add } = archiveOf([2, 3, 4, 5]), out = join(root, 'out'), fresh = join(root, 'fresh');
    expect(reduce(archive, out, '--quiet').code).toBe(0);
    add(1);
    const bounded = reduce(archive, out, '--since', day(5), '--until', day(6));
    expect(bounded.code).toBe(0);
    expect(bounded.stdout).toContain("  LATE    1 late arrival (a recording starting before this period that came in after the previous run, started 2026-11-01T02:00:00.000Z): not reduced, as --until bounds this run, so the trends' history lacks them; run once with --since alone (or without --since) to reduce them; see run.json (period.late_arrivals)");
    expect(readJson(join(out, 'run.json')).period.late_arrivals).toMatchObject({ count: 1, reduced: false, recordings: [{ recording: name(1), group: 'rig', start_time: '2026-11-01T02:00:00.000Z' }] });
    const open = reduce(archive, out, '--since', day(5), '--quiet');
    expect(open.code).toBe(0);
    expect(readJson(join(out, 'run.json')).period.late_arrivals).toMatchObject({ count: 1, reduced: true });
    expect(reduce(archive, fresh, '--quiet').code).toBe(0);
    expect(await trendRows(out)).toEqual(await trendRows(fresh, `recording = '${name(5)}'`));
  }, 120_000);

  it('one that cannot be read fails as itself, named with its reason (exit code 1), and is not tried again as a late arrival', () => {
    const { root, archive } = archiveOf([2, 3, 4, 5]), out = join(root, 'out');
    expect(reduce(archive, out, '--quiet').code).toBe(0);
    // Night 1 cut short in a copy that kept its modification time (cp -p): the reader refuses it as it opens, so its start is
    // that time, before the period.
    const cut = join(archive, name(1)), then = new Date(Date.UTC(2026, 10, 1, 3));
    writeFileSync(cut, night(1).subarray(0, 2000));
    utimesSync(cut, then, then);
    const r = reduce(archive, out, '--since', day(5));
    expect(r.code).toBe(1);
    expect(r.stdout).toMatch(/  LATE    1 late arrival .*; 1 failed; named on every --since run until .*; see run.json/);
    expect(r.stdout).toMatch(new RegExp(`  FAILED  ${name(1)} \\(a late arrival\\): .+`));
    const late = readJson(join(out, 'run.json')).period.late_arrivals;
    expect(late).toMatchObject({ count: 1, failed: 1, recordings: [{ recording: name(1), status: 'failed' }] });
    expect(late.recordings[0].reason).toEqual(expect.any(String));
    // A failure is stored: the retry rules hold it, as for any recording that failed; it is named as in no period's tables, not as failed again.
    const next = reduce(archive, out, '--since', day(5));
    expect(next.code).toBe(0);
    const again = readJson(join(out, 'run.json')).period.late_arrivals;
    expect(again.count).toBe(0);
    expect(again.earlier).toMatchObject({ count: 1, unlisted: 0, recordings: [{ recording: name(1), status: 'failed' }] });
  }, 120_000);

  it('shards reduce the late arrivals of their share, and quern merge names them all and holds the history a fresh run holds', async () => {
    const { root, archive, add } = archiveOf([2, 3, 4]), out = join(root, 'out'), fresh = join(root, 'fresh');
    const shards = (...more: string[]) => {
      for (const k of [1, 2]) expect(quern('reduce', archive, '--out', out, '--shard', `${k}/2`, '--jobs', '1', '--quiet', ...more).code).toBe(0);
      const m = quern('merge', out, '--jobs', '1');
      expect(m.stderr).toBe('');
      expect(m.code).toBe(0);
      return m;
    };
    shards();
    add(5);
    add(1);
    add(6);
    const m = shards('--since', day(5));
    expect(m.stdout).toMatch(/  LATE    1 late arrival .*started 2026-11-01T02:00:00\.000Z\): reduced for the trends' history/);
    expect(readJson(join(out, 'run.json')).period.late_arrivals).toMatchObject({ count: 1, reduced: true, recordings: [{ recording: name(1), status: 'reduced' }] });
    expect(reduce(archive, fresh, '--quiet').code).toBe(0);
    expect(await trendRows(out)).toEqual(await trendRows(fresh, `recording in ('${name(5)}', '${name(6)}')`));
  }, 180_000);

  it('is named on every --since run after it came until a run its tables hold it in, as the line advises, and then no more', async () => {
    const { root, archive, add } = archiveOf([2, 3, 4]), out = join(root, 'out');
    const tabled = async () => (await rows(`select distinct recording from '${out}/features.parquet' order by 1`)).map((x) => x.recording);
    expect(reduce(archive, out, '--since', day(2), '--quiet').code).toBe(0);
    // Night N+1: night 5 comes, and night 1 is copied in late: named as found, kept out of the tables.
    add(5);
    add(1);
    const found = reduce(archive, out, '--since', day(5));
    expect(found.code).toBe(0);
    expect(found.stdout).toMatch(/  LATE    1 late arrival \(.*\): reduced for the trends' history/);
    expect(await tabled()).toEqual([name(5)]);
    // Nights N+2 and N+3: named again each night (terminal, run.json, the JSON log's summary), in no period's tables.
    for (const n of [6, 7]) {
      add(n);
      const r = reduce(archive, out, '--since', day(n), '--log', 'json');
      expect(r.code).toBe(0);
      expect(r.stdout).toContain("  LATE    1 late arrival found by earlier runs (started 2026-11-01T02:00:00.000Z; rig/2026-11-01.wav) is in no period's tables yet; run once without --since, or with --since 2026-11-01T02:00:00.000Z or earlier, to put it in the tables; see run.json (period.late_arrivals.earlier)");
      expect(JSON.parse(r.stderr.trim().split('\n').at(-1)!)).toMatchObject({ event: 'summary', late_arrivals: { count: 0, earlier: 1 } });
      const late = readJson(join(out, 'run.json')).period.late_arrivals;
      expect(late).toMatchObject({ count: 0, earlier: { count: 1, unlisted: 0, earliest_start: '2026-11-01T02:00:00.000Z', recordings: [{ recording: name(1), group: 'rig', start_time: '2026-11-01T02:00:00.000Z', status: 'reduced' }] } });
      expect(await tabled()).toEqual([name(n)]);
    }
    // The advised run: its tables hold night 1 (and every night since), and it names none.
    const taken = reduce(archive, out, '--since', '2026-11-01T02:00:00.000Z');
    expect(taken.code).toBe(0);
    expect(taken.stdout).not.toMatch(/LATE/);
    expect(await tabled()).toEqual([1, 2, 3, 4, 5, 6, 7].map(name));
    // The nights after: no more.
    add(8);
    const after = reduce(archive, out, '--since', day(8));
    expect(after.code).toBe(0);
    expect(after.stdout).not.toMatch(/LATE/);
    expect(readJson(join(out, 'run.json')).period.late_arrivals).not.toHaveProperty('earlier');
    expect(await tabled()).toEqual([name(8)]);
  }, 180_000);

  it('found by shards, is named by every merge until a run without --since takes it in, and then by none', async () => {
    const { root, archive, add } = archiveOf([2, 3, 4]), out = join(root, 'out');
    const tabled = async () => (await rows(`select distinct recording from '${out}/features.parquet' order by 1`)).map((x) => x.recording);
    const shards = (...more: string[]) => {
      for (const k of [1, 2]) expect(quern('reduce', archive, '--out', out, '--shard', `${k}/2`, '--jobs', '1', '--quiet', ...more).code).toBe(0);
      const m = quern('merge', out, '--jobs', '1');
      expect(m.code).toBe(0);
      return m;
    };
    shards('--since', day(2));
    add(5);
    add(1);
    expect(shards('--since', day(5)).stdout).toMatch(/  LATE    1 late arrival \(/);
    add(6);
    const m = shards('--since', day(6));
    expect(m.stdout).toContain("  LATE    1 late arrival found by earlier runs (started 2026-11-01T02:00:00.000Z; rig/2026-11-01.wav) is in no period's tables yet");
    expect(readJson(join(out, 'run.json')).period.late_arrivals.earlier).toMatchObject({ count: 1, recordings: [{ recording: name(1) }] });
    expect(await tabled()).toEqual([name(6)]);
    // A whole run without --since takes every recording in; the shards' next night names nothing late.
    expect(reduce(archive, out, '--quiet').code).toBe(0);
    expect(await tabled()).toEqual([1, 2, 3, 4, 5, 6].map(name));
    add(7);
    const next = shards('--since', day(7));
    expect(next.stdout).not.toMatch(/LATE/);
    expect(readJson(join(out, 'run.json')).period.late_arrivals).not.toHaveProperty('earlier');
  }, 240_000);
});
