// Nightly life: incremental re-runs, a run killed part-way and resumed, shards merged, a period selected, logs for machines.
import { spawn } from 'node:child_process';
import { appendFileSync, cpSync, existsSync, readdirSync, readFileSync, rmSync, utimesSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { Ajv } from 'ajv';
import formats from 'ajv-formats';
import { describe, expect, it } from 'vitest';
import { byStartTime, lastCapture, parseShard, parseSpan, parseWhen, shardOf } from '../pipeline/select/select.js';
import type { GroupDeclaration } from '../spec/archive.js';
import { scanPack } from '../pipeline/store/pack.js';
import { makeSampleArchive } from '../scripts/make-sample-archive.js';
import { quern, readJson, repo, sampleArchiveCopy, tempDir } from './helpers.js';

const addFormats = formats as unknown as (ajv: Ajv) => Ajv;

async function table(path: string): Promise<Record<string, unknown>[]> {
  const db = await (await DuckDBInstance.create()).connect();
  return (await db.runAndReadAll(`select * from '${path}' order by all`)).getRowObjectsJson() as Record<string, unknown>[];
}
const ENVELOPE_COLUMNS = ['filtered_rms', 'env_mean', 'env_rms', 'env_peak', 'env_dominant_frequency', 'env_dominant_prominence_db'];
const without = (rows: Record<string, unknown>[], cols: string[]) => rows.map((r) => Object.fromEntries(Object.entries(r).filter(([k]) => !cols.includes(k))));

describe('incremental re-runs', () => {
  it('recomputes nothing when nothing changed, and writes identical tables', async () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    quern('reduce', archive, '--out', out, '--quiet');
    const before = await table(join(out, 'features.parquet')), windowsBefore = await table(join(out, 'windows.parquet')), trendsBefore = await table(join(out, 'trends.parquet'));
    quern('reduce', archive, '--out', out, '--quiet');
    const run = readJson(join(out, 'run.json'));
    expect(run.counts.recomputed).toBe(0);
    expect(run.recordings.every((r: any) => r.recomputed.length === 0)).toBe(true);
    expect(run.recordings.find((r: any) => r.recording === 'nightly/2026-11-16/pump-endurance.wav').why).toBe('unchanged');
    expect(await table(join(out, 'features.parquet'))).toEqual(before);
    expect(await table(join(out, 'windows.parquet'))).toEqual(windowsBefore);
    expect(await table(join(out, 'trends.parquet'))).toEqual(trendsBefore);
  });

  it('changing the envelope filter recomputes only the envelope group; every other column is reused bit for bit', async () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    const spec = readFileSync(join(repo, 'schemas', 'reduction.default.yaml'), 'utf8');
    writeFileSync(join(archive, 'reduction.yaml'), spec);
    quern('reduce', archive, '--out', out, '--quiet');
    const before = await table(join(out, 'features.parquet'));
    writeFileSync(join(archive, 'reduction.yaml'), spec.replace('low_hz: 2500, high_hz: 4500', 'low_hz: 3000, high_hz: 4000'));
    quern('reduce', archive, '--out', out, '--quiet');
    const run = readJson(join(out, 'run.json'));
    for (const r of run.recordings.filter((x: any) => x.status === 'reduced')) {
      expect([r.why, r.recomputed]).toEqual(["spec changed for envelope", ["envelope"]]);
      expect(r.why).toBe('spec changed for envelope');
    }
    const after = await table(join(out, 'features.parquet'));
    // DuckDB's JSON rendering keeps every digit of a double, so equal text is equal bits.
    expect(without(after, ENVELOPE_COLUMNS)).toEqual(without(before, ENVELOPE_COLUMNS));
    const changed = after.filter((r, i) => r.env_rms !== before[i].env_rms && r.env_rms !== null);
    expect(changed.length).toBeGreaterThan(0);
  });

  it('a spec section removed since the last run leaves no columns or rows behind', async () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    quern('reduce', archive, '--out', out, '--quiet');
    expect((await table(join(out, 'windows.parquet'))).length).toBeGreaterThan(0);
    writeFileSync(join(archive, 'reduction.yaml'), 'statistics: {}\n');
    quern('reduce', archive, '--out', out, '--quiet');
    expect(await table(join(out, 'windows.parquet'))).toEqual([]);
    const row = (await table(join(out, 'features.parquet')))[0];
    expect('band_20_200_rms' in row).toBe(false);
    // Statistics and quality were reused (only the unreadable file is tried again, as the spec changed).
    expect(readJson(join(out, 'run.json')).recordings.filter((r: any) => r.status === 'reduced' && r.recomputed.length > 0)).toEqual([]);
  });

  it('reduces new recordings, drops deleted ones, redoes edited ones; --force redoes everything', async () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    quern('reduce', archive, '--out', out, '--quiet');
    cpSync(join(archive, 'nightly', '2026-11-16'), join(archive, 'nightly', '2026-11-23'), { recursive: true });
    rmSync(join(archive, 'strain'), { recursive: true });
    const edited = join(archive, 'handheld', '2026-11-20_spot-check.csv');
    appendFileSync(edited, '2,000000;1,0000;1,0000\r\n');
    quern('reduce', archive, '--out', out, '--quiet');
    const run = readJson(join(out, 'run.json'));
    const why = Object.fromEntries(run.recordings.map((r: any) => [r.recording, r.why]));
    expect(why['nightly/2026-11-23/pump-endurance.wav']).toBe('new recording');
    expect(why['handheld/2026-11-20_spot-check.csv']).toMatch(/content changed/);
    expect(why['nightly/2026-11-16/pump-endurance.wav']).toBe('unchanged');
    expect(Object.keys(why).some((k) => k.startsWith('strain/'))).toBe(false);
    const rows = await table(join(out, 'features.parquet'));
    expect(rows.some((r) => String(r.recording).startsWith('strain/'))).toBe(false);
    expect(rows.filter((r) => r.recording === 'handheld/2026-11-20_spot-check.csv')[0].n).toBe('5121');
    quern('reduce', archive, '--out', out, '--quiet', '--force');
    expect(readJson(join(out, 'run.json')).recordings.every((r: any) => r.why === 'forced (--force)')).toBe(true);
  });

  it('notices an edit that keeps size and modification time when asked for content hashes (--hash)', async () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    const file = join(archive, 'nightly', '2026-11-17', 'pump-endurance.wav');
    const old = new Date(Date.now() - 3_600_000);
    utimesSync(file, old, old);
    quern('reduce', archive, '--out', out, '--quiet', '--hash');
    const bytes = readFileSync(file);
    bytes[bytes.length - 2] ^= 0xff; // same size
    writeFileSync(file, bytes);
    utimesSync(file, old, old); // same modification time
    const whyNow = () => readJson(join(out, 'run.json')).recordings.find((r: any) => r.recording === 'nightly/2026-11-17/pump-endurance.wav').why;
    // The fast path trusts size and modification time: this edit is invisible to it, as documented.
    quern('reduce', archive, '--out', out, '--quiet');
    expect(whyNow()).toBe('unchanged');
    quern('reduce', archive, '--out', out, '--quiet', '--hash');
    expect(whyNow()).toMatch(/content changed/);
  });

  it('computes again, once, what was stored without a content hash when --hash is first given, and says why', () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    const recording = 'nightly/2026-11-17/pump-endurance.wav', file = join(archive, recording);
    const old = new Date(Date.now() - 3_600_000);
    utimesSync(file, old, old);
    const whyNow = () => readJson(join(out, 'run.json')).recordings.find((r: any) => r.recording === recording).why;
    quern('reduce', archive, '--out', out, '--quiet');
    quern('reduce', archive, '--out', out, '--quiet', '--hash');
    expect(whyNow()).toBe('no content hash stored to compare with (--hash): computed again, and stored with its hash');
    quern('reduce', archive, '--out', out, '--quiet', '--hash');
    expect(whyNow()).toBe('unchanged');
  });
});

describe('crash safety', () => {
  it('a run killed with SIGKILL part-way, then started again, completes with the same tables as an uninterrupted run', async () => {
    const base = tempDir();
    const archive = join(base, 'archive');
    makeSampleArchive(archive);
    // More recordings, so the kill lands mid-run.
    for (let d = 0; d < 24; d++) cpSync(join(archive, 'nightly', '2026-11-16'), join(archive, 'nightly', `2026-12-${String(d + 1).padStart(2, '0')}`), { recursive: true });
    const killed = join(base, 'killed'), clean = join(base, 'clean');
    const child = spawn(process.execPath, [join(repo, 'dist', 'pipeline', 'cli.js'), 'reduce', archive, '--out', killed, '--jobs', '1', '--quiet'], { stdio: 'ignore' });
    const entries = async () => { let n = 0; await scanPack(join(killed, 'cache', 'entries.pack'), () => n++); return n; };
    const deadline = Date.now() + 60_000;
    while ((await entries()) < 5 && Date.now() < deadline) await new Promise((r) => setTimeout(r, 20));
    child.kill('SIGKILL');
    await new Promise((r) => child.on('exit', r));
    const stored = await entries();
    expect(stored).toBeGreaterThanOrEqual(5);
    expect(stored).toBeLessThan(35); // killed before the end
    expect(existsSync(join(killed, 'features.parquet'))).toBe(false); // never half-written: absent until the end
    const resumed = quern('reduce', archive, '--out', killed, '--quiet');
    expect(resumed.code).toBe(1); // the planted truncated file
    const run = readJson(join(killed, 'run.json'));
    expect(run.counts.reused).toBeGreaterThanOrEqual(4);
    quern('reduce', archive, '--out', clean, '--quiet');
    expect(await table(join(killed, 'features.parquet'))).toEqual(await table(join(clean, 'features.parquet')));
    expect(await table(join(killed, 'windows.parquet'))).toEqual(await table(join(clean, 'windows.parquet')));
  });
});

describe('sharding', () => {
  it('N shard processes writing into one folder, then quern merge, equal the single-process result row for row', async () => {
    const archive = sampleArchiveCopy(), shared = join(archive, '..', 'shared'), single = join(archive, '..', 'single');
    const N = 3;
    const runs = Array.from({ length: N }, (_, i) => new Promise<number>((resolve) => {
      const c = spawn(process.execPath, [join(repo, 'dist', 'pipeline', 'cli.js'), 'reduce', archive, '--out', shared, '--shard', `${i + 1}/${N}`, '--jobs', '1', '--quiet'], { stdio: 'ignore' });
      c.on('exit', (code) => resolve(code ?? -1));
    }));
    expect((await Promise.all(runs)).every((c) => c === 0 || c === 1)).toBe(true);
    expect(readdirSync(join(shared, 'parts')).filter((f) => f.startsWith('features-')).sort()).toEqual(['features-1-of-3.parquet', 'features-2-of-3.parquet', 'features-3-of-3.parquet']);
    // The parts read as one dataset.
    const parts = await table(join(shared, 'parts', 'features-*.parquet'));
    const merged = quern('merge', shared, '--export', 'csv');
    expect(merged.code).toBe(1);
    expect(existsSync(join(shared, 'features.csv'))).toBe(true);
    quern('reduce', archive, '--out', single, '--quiet');
    const one = await table(join(single, 'features.parquet'));
    expect(await table(join(shared, 'features.parquet'))).toEqual(one);
    expect(parts).toEqual(one);
    expect(await table(join(shared, 'windows.parquet'))).toEqual(await table(join(single, 'windows.parquet')));
    for (const name of ['trends', 'spectra']) expect(await table(join(shared, `${name}.parquet`)), name).toEqual(await table(join(single, `${name}.parquet`)));
    const q = (p: string) => { const j = readJson(p); return { totals: j.totals, recordings: j.recordings, unmatched: j.unmatched, changes: j.changes }; };
    expect(q(join(shared, 'quality.json'))).toEqual(q(join(single, 'quality.json')));
    expect(existsSync(join(shared, 'quality.html'))).toBe(true);
    // Sharded runs leave the trends to merge, so merge is where a nightly job asks to be told of changes.
    const told = quern('merge', shared, '--exit-on', 'changed');
    expect(told.code).toBe(3);
    expect(told.stdout).toMatch(/exit code 3: \d+ channel features changed \(--exit-on changed\); 1 recording failed as well/);
  });

  it('merge names the groups quiet in the whole archive over a period, which a shard alone cannot tell', () => {
    const archive = sampleArchiveCopy(), shared = join(archive, '..', 'shared');
    for (const k of [1, 2]) expect(quern('reduce', archive, '--out', shared, '--shard', `${k}/2`, '--since', '2026-11-19', '--jobs', '1').stdout).not.toMatch(/QUIET/);
    const merged = quern('merge', shared, '--jobs', '1');
    expect(merged.stdout).toContain('  QUIET   group quick-look: none of its recordings starts in this period; its latest started 2026-11-18T14:30:00.000Z');
    expect(readJson(join(shared, 'run.json')).period.quiet_groups).toEqual([{ group: 'quick-look', latest_start: '2026-11-18T14:30:00.000Z' }]);
    // A stopped rig can page someone: --exit-on quiet.
    const paged = quern('merge', shared, '--jobs', '1', '--exit-on', 'alarm,quiet');
    expect(paged.code).toBe(3);
    expect(paged.stdout).toContain('  exit code 3: 1 group quiet over the period (--exit-on alarm,quiet)');
  });

  it('merge refuses while a shard is missing, naming it', () => {
    const archive = sampleArchiveCopy(), shared = join(archive, '..', 'shared');
    quern('reduce', archive, '--out', shared, '--shard', '2/3', '--quiet', '--jobs', '1');
    const r = quern('merge', shared);
    expect(r.code).toBe(2);
    // With the command to run each, from shard 2's recorded command, its shard number changed.
    const advice = /shards 1, 3 of 3 have not written their part yet; run them \((quern reduce .*--shard 1\/3); (quern reduce .*--shard 3\/3)\), then merge again/.exec(r.stderr);
    expect(advice, r.stderr).not.toBeNull();
    expect(advice![1]).toBe(`quern reduce ${archive} --out ${shared} --jobs 1 --quiet --shard 1/3`);
    // The advice works as given: run it, and the merge goes through.
    for (const command of [advice![1], advice![2]]) expect([0, 1]).toContain(quern(...command.split(' ').slice(1)).code); // 1 for the share holding the truncated recording
    expect(quern('merge', shared, '--jobs', '1').code).toBe(1); // merged, with the sample archive's truncated recording failed
  });

  it('shares are stable and cover every recording once; auto reads Slurm and Kubernetes variables', () => {
    const names = Array.from({ length: 1000 }, (_, i) => `night-${i}/capture.wav`);
    const counts = [1, 2, 3, 4].map((k) => names.filter((n) => shardOf(n, 4) === k).length);
    expect(counts.reduce((a, b) => a + b)).toBe(1000);
    expect(Math.min(...counts)).toBeGreaterThan(200);
    expect(shardOf('night-7/capture.wav', 4)).toBe(shardOf('night-7/capture.wav', 4));
    expect(parseShard('auto', { SLURM_ARRAY_TASK_ID: '3', SLURM_ARRAY_TASK_MIN: '0', SLURM_ARRAY_TASK_COUNT: '8' })).toEqual({ k: 4, n: 8 });
    expect(parseShard('auto', { JOB_COMPLETION_INDEX: '0', QUERN_SHARD_COUNT: '5' })).toEqual({ k: 1, n: 5 });
    expect(() => parseShard('auto', {})).toThrow(/found no scheduler variables/);
    expect(() => parseShard('5/4')).toThrow(/shards run from 1 to N/);
  });
});

describe('selecting a period and logging', () => {
  it('--since/--until keep the recordings whose start (bext origination, else modification time) falls inside', () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    const r = quern('reduce', archive, '--out', out, '--since', '2026-11-19', '--until', '2026-11-21', '--quiet');
    expect(r.code).toBe(0);
    const run = readJson(join(out, 'run.json'));
    expect(run.recordings.map((x: any) => x.recording)).toEqual(['cell-sound/2026-11-20_cell-sound.wav', 'nightly/2026-11-19/pump-endurance.wav', 'nightly/2026-11-20/pump-endurance.wav']);
    expect(run.period.selected).toBe(3);
    // The quick-look rig's one capture is from the 18th, before the period: a rig that may have stopped is named. The
    // handheld and strain files start at their modification time (now), after the period: not quiet.
    expect(run.period.quiet_groups).toEqual([{ group: 'quick-look', latest_start: '2026-11-18T14:30:00.000Z' }]);
    expect(r.stdout).toContain('  QUIET   group quick-look: none of its recordings starts in this period; its latest started 2026-11-18T14:30:00.000Z (a rig that stopped capturing, or captures not yet copied in)');
    // quality.json and quality.html name it too, where the morning's reader looks.
    const quality = readJson(join(out, 'quality.json'));
    expect(quality.quiet_groups).toEqual(run.period.quiet_groups);
    const ajv = new Ajv({ allErrors: true, strict: false });
    addFormats(ajv);
    const validate = ajv.compile(JSON.parse(readFileSync(join(repo, 'schemas', 'quality.schema.json'), 'utf8')));
    expect(validate(quality), JSON.stringify(validate.errors?.slice(0, 3))).toBe(true);
    expect(readFileSync(join(out, 'quality.html'), 'utf8')).toContain("<h2>Groups that fell quiet</h2><ul><li>quick-look: none of its recordings starts in this run's period; its latest started 2026-11-18T14:30:00.000Z");
    const paged = quern('reduce', archive, '--out', out, '--since', '2026-11-19', '--until', '2026-11-21', '--quiet', '--exit-on', 'quiet');
    expect(paged.code).toBe(3);
    expect(paged.stdout).toContain('  exit code 3: 1 group quiet over the period (--exit-on quiet)');
    expect(parseWhen('7d', Date.UTC(2026, 10, 23))).toBe(Date.UTC(2026, 10, 16));
    expect(() => parseWhen('last week')).toThrow(/neither a date .* nor a span/);
  });

  it('a quiet group is one silent for the period after capturing within seven periods before it; silent for longer, it is retired', async () => {
    const day = 86_400_000, now = Date.UTC(2026, 11, 4, 6), since = now - day;
    const groups = ['tonight', 'stopped', 'retired', 'ahead'].map((name) => ({ name }) as GroupDeclaration);
    const starts: [string, number, number][] = [['a.wav', 0, now - 2 * 3_600_000], ['b.wav', 1, now - 3 * day], ['c.wav', 2, now - 9 * day], ['d.wav', 3, now + day], ['e.wav', 1, now - 20 * day]];
    const recordings = starts.map(([recording, group], i) => ({ recording, path: `/x/${recording}`, group, size: i, mtimeMs: 0, readAtMs: 0 }));
    const known = (r: string) => { const i = starts.findIndex(([name]) => name === r); return { size: i, mtimeMs: 0, start_ms: starts[i][2] }; };
    const { chosen, quiet } = await byStartTime(recordings, groups, known, since, Infinity, now);
    expect(chosen.map((r) => r.recording)).toEqual(['a.wav', 'd.wav']);
    expect(quiet).toEqual([{ group: 'stopped', latest_start: new Date(now - 3 * day).toISOString() }]);
  });

  it('a group that declares capture_every is quiet after that long without a recording, whatever the period, and never retired', async () => {
    const day = 86_400_000, now = Date.UTC(2026, 11, 4, 6), since = now - 7 * day;
    const groups = [['weekly', '1w'], ['daily', '1d'], ['fresh', '1d'], ['gone', '1d'], ['never', '12h'], ['undeclared', null]].map(([name, capture_every]) => ({ name, capture_every }) as GroupDeclaration);
    const starts: [string, number, number][] = [['w.wav', 0, now - 10 * day], ['w2.wav', 0, now - 3 * day], ['d.wav', 1, now - 30 * 3_600_000], ['f.wav', 2, now - 2 * 3_600_000], ['g.wav', 3, now - 60 * day], ['u.wav', 5, now - 8 * day]];
    const recordings = starts.map(([recording, group], i) => ({ recording, path: `/x/${recording}`, group, size: i, mtimeMs: 0, readAtMs: 0 }));
    const known = (r: string) => { const i = starts.findIndex(([name]) => name === r); return { size: i, mtimeMs: 0, start_ms: starts[i][2] }; };
    const { chosen, quiet, due } = await byStartTime(recordings, groups, known, since, Infinity, now);
    expect(chosen.map((r) => r.recording)).toEqual(['w2.wav', 'd.wav', 'f.wav']);
    // The weekly rig captured 3 days ago; the daily one 30 h ago, within this week's period but a day overdue; one silent for
    // 60 days is still named, as its declaration says it captures daily; one that declares a cadence and has no recording at
    // all is named too (a rig that never delivered, or a match that no longer matches); an undeclared one silent for the period is quiet.
    expect(quiet).toEqual([
      { group: 'daily', latest_start: new Date(now - 30 * 3_600_000).toISOString(), capture_every: '1d' },
      { group: 'gone', latest_start: new Date(now - 60 * day).toISOString(), capture_every: '1d' },
      { group: 'never', latest_start: null, capture_every: '12h' },
      { group: 'undeclared', latest_start: new Date(now - 8 * day).toISOString() },
    ]);
    expect(lastCapture(quiet[2])).toBe('none of its recordings was found in the archive (a rig that never delivered, or a match pattern that no longer matches its files)');
    expect(due.map((d) => [d.group, d.due])).toEqual([['weekly', '1w'], ['daily', '1d'], ['fresh', '1d'], ['gone', '1d'], ['never', '12h']].map(([g, e]) => [g, new Date(now - parseSpan(e)).toISOString()]));
    expect(due.find((d) => d.group === 'never')!.latest_start).toBeNull();
  });

  it('capture_every in a whole run and across shards: merge judges it from every shard\'s latest start, with --until too', () => {
    const withCadence = (every: string) => {
      const archive = sampleArchiveCopy();
      const path = join(archive, 'archive.yaml');
      writeFileSync(path, readFileSync(path, 'utf8').replace('  - name: quick-look\n', `  - name: quick-look\n    capture_every: ${every}\n`));
      return archive;
    };
    const period = ['--since', '2026-11-19', '--until', '2026-11-20', '--jobs', '1'];
    // quick-look's latest capture, 2026-11-18T14:30Z, is within a week of the period's end and not within 6 h of it.
    const weekly = withCadence('1w');
    expect(quern('reduce', weekly, '--out', join(weekly, '..', 'out'), ...period).stdout).not.toMatch(/QUIET/);
    const often = withCadence('6h'), shared = join(often, '..', 'shared');
    const whole = quern('reduce', often, '--out', join(often, '..', 'whole'), ...period);
    expect(whole.stdout).toContain('  QUIET   group quick-look: no recording of it started in the 6h before the end of this period (its capture_every); its latest started 2026-11-18T14:30:00.000Z');
    for (const k of [1, 2]) expect(quern('reduce', often, '--out', shared, '--shard', `${k}/2`, ...period).stdout).not.toMatch(/QUIET/);
    expect(readJson(join(shared, 'parts', 'run-1-of-2.json')).period.capture_due).toEqual([expect.objectContaining({ group: 'quick-look', due: '2026-11-19T18:00:00.000Z', capture_every: '6h' })]);
    const merged = quern('merge', shared, '--jobs', '1');
    expect(readJson(join(shared, 'run.json')).period.quiet_groups).toEqual([{ group: 'quick-look', latest_start: '2026-11-18T14:30:00.000Z', capture_every: '6h' }]);
    expect(merged.stdout).toContain('QUIET   group quick-look: no recording of it started in the 6h');
  });

  it('--log json writes one JSON object a line, ending with a summary', () => {
    const archive = sampleArchiveCopy();
    const r = quern('reduce', archive, '--log', 'json');
    const lines = r.stderr.trim().split('\n').map((l) => JSON.parse(l));
    expect(lines[0].event).toBe('start');
    expect(lines.filter((l) => l.event === 'recording').length).toBe(11);
    expect(lines.at(-1)).toMatchObject({ event: 'summary', reduced: 10, failed: 1, changes: { alarm: 0, changed: 5 }, quiet_groups: [] });
  });
});
