// quern merge in a night's life: shards stopped part-way (a time limit's SIGKILL or SIGTERM) after a new night came in,
// recordings that came in between the shards' scans, and parts of two shard counts.
import { spawn } from 'node:child_process';
import { cpSync, existsSync, readFileSync, readdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { describe, expect, it } from 'vitest';
import { shardOf } from '../pipeline/select/select.js';
import { quern, readJson, repo, sampleArchiveCopy } from './helpers.js';

const N = 3;
const shardRun = (archive: string, out: string, k: number, n = N) => quern('reduce', archive, '--out', out, '--shard', `${k}/${n}`, '--jobs', '1', '--quiet');

/** The recordings features.parquet holds, read by DuckDB. */
async function tabled(out: string): Promise<string[]> {
  const db = await (await DuckDBInstance.create()).connect();
  return ((await db.runAndReadAll(`select distinct recording from '${join(out, 'features.parquet')}' order by 1`)).getRowObjectsJson() as { recording: string }[]).map((r) => r.recording);
}

/** New nights copied in: the first night's capture under later dates, some in every shard's share. */
function newNights(archive: string, days: string[]): string[] {
  for (const d of days) cpSync(join(archive, 'nightly', '2026-11-16'), join(archive, 'nightly', d), { recursive: true });
  return days.map((d) => `nightly/${d}/pump-endurance.wav`);
}

/** Starts shard k, waits until its run has begun (its start kept under a new run id), then stops it with `signal`. */
async function stoppedPartWay(archive: string, out: string, k: number, signal: NodeJS.Signals): Promise<number> {
  const startFile = join(out, 'parts', `started-${k}-of-${N}.json`);
  const before = existsSync(startFile) ? readJson(startFile).run_id : null;
  const child = spawn(process.execPath, [join(repo, 'dist', 'pipeline', 'cli.js'), 'reduce', archive, '--out', out, '--shard', `${k}/${N}`, '--jobs', '1', '--quiet'], { stdio: 'ignore' });
  const ended = new Promise<void>((resolve) => child.on('exit', () => resolve()));
  for (let i = 0; i < 2000; i++) {
    const now = existsSync(startFile) ? (() => { try { return JSON.parse(readFileSync(startFile, 'utf8')).run_id; } catch { return null; } })() : null;
    if (now && now !== before) break;
    await new Promise((r) => setTimeout(r, 5));
  }
  child.kill(signal);
  await ended;
  return child.pid!;
}

describe('merge after shards stopped part-way', () => {
  it('refuses, naming each shard whose latest run did not finish and what it left, until that shard is run again', async () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    for (let k = 1; k <= N; k++) shardRun(archive, out, k);
    expect(quern('merge', out, '--jobs', '1').code).toBe(1); // the sample archive holds one recording that fails
    // A new night arrives (eight captures, in every shard's share); shard 2 is killed outright, shard 3 stopped by SIGTERM.
    const arrived = newNights(archive, Array.from({ length: 8 }, (_, i) => `2026-12-0${i + 1}`));
    expect(new Set(arrived.map((r) => shardOf(r, N))).size).toBe(N);
    shardRun(archive, out, 1);
    const killed = await stoppedPartWay(archive, out, 2, 'SIGKILL');
    await stoppedPartWay(archive, out, 3, 'SIGTERM');
    expect(existsSync(join(out, 'parts', 'run-2-of-3.lock'))).toBe(true);
    expect(existsSync(join(out, 'parts', 'run-3-of-3.lock'))).toBe(false); // released on SIGTERM: the kept start tells
    const refused = quern('merge', out, '--jobs', '1');
    expect(refused.code).toBe(2);
    expect(refused.stderr).toMatch(new RegExp(`shard 2 of 3 did not finish its latest run \\(host [^,]+, pid ${killed}, started [^;]+; its lock parts/run-2-of-3.lock is left behind: process ${killed} on this host is no longer running\\)`));
    expect(refused.stderr).toMatch(/shard 3 of 3 did not finish its latest run \(host [^,]+, pid \d+, started [^;]+; it ended before writing its part\)/);
    expect(refused.stderr).toMatch(/run shard 2\/3 again \(quern reduce .* --shard 2\/3\), then merge/);
    // Run again, the shards finish and the merge holds the new night.
    shardRun(archive, out, 2);
    shardRun(archive, out, 3);
    const merged = quern('merge', out, '--jobs', '1');
    expect(merged.code).toBe(1);
    expect(await tabled(out)).toEqual(expect.arrayContaining(arrived));
  });
});

describe('merge after a shard failed before it took its lock', () => {
  it('refuses, naming the shard, why it failed and the command to run again, rather than take its earlier part', async () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    for (let k = 1; k <= N; k++) shardRun(archive, out, k);
    expect(quern('merge', out, '--jobs', '1').code).toBe(1); // the sample archive holds one recording that fails
    const arrived = newNights(archive, Array.from({ length: 8 }, (_, i) => `2026-12-0${i + 1}`));
    expect(new Set(arrived.map((r) => shardOf(r, N))).size).toBe(N);
    // Shard 2 is given a spec that cannot be read (YAML 1.2: a flow sequence left open is a syntax error).
    const spec = join(archive, '..', 'broken.yaml');
    writeFileSync(spec, 'spectrum: { segment: [4096\n');
    const failed = quern('reduce', archive, '--out', out, '--shard', `2/${N}`, '--spec', spec, '--jobs', '1', '--quiet');
    expect(failed.code).toBe(2);
    expect(existsSync(join(out, 'parts', 'run-2-of-3.lock'))).toBe(false);
    shardRun(archive, out, 1);
    shardRun(archive, out, 3);
    const refused = quern('merge', out, '--jobs', '1');
    expect(refused.code, refused.stderr).toBe(2);
    expect(refused.stderr).toMatch(new RegExp(`shard 2 of 3 failed at the start of its latest run, before taking its lock \\(host [^,]+, pid \\d+, started [^)]+\\): .*broken\\.yaml.*; so parts/run-2-of-3\\.json is from its run started [^ ]+ and lacks what came since: mend that, run shard 2/3 again \\(quern reduce .* --shard 2/3\\), then merge`));
    expect(refused.stderr).not.toMatch(/shard [13] of 3/);
    // Mended and run again, the shard finishes and the merge holds the new night.
    expect(shardRun(archive, out, 2).code).toBe(1);
    const merged = quern('merge', out, '--jobs', '1');
    expect(merged.code, merged.stderr).toBe(1);
    expect(await tabled(out)).toEqual(expect.arrayContaining(arrived));
  });
});

describe('merge when the shards saw different archives', () => {
  it('names the recordings that came in after their own shard scanned, and tells a stale shard count', async () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    // A capture of shard 1's share arrives after shard 1 scanned, before shards 2 and 3 did.
    const day = Array.from({ length: 30 }, (_, i) => `2026-12-${String(i + 1).padStart(2, '0')}`).find((d) => shardOf(`nightly/${d}/pump-endurance.wav`, N) === 1)!;
    shardRun(archive, out, 1);
    const [late] = newNights(archive, [day]);
    shardRun(archive, out, 2);
    shardRun(archive, out, 3);
    const merged = quern('merge', out, '--jobs', '1');
    expect(merged.code).toBe(1);
    expect(merged.stdout).toContain(`  ARRIVED 1 recording came into the archive while the shards ran, after the scan of the shard whose share it is: ${late}; absent from these tables and trends until the next run`);
    // Merge computes nothing itself: the shards did.
    expect(merged.stdout).toMatch(/; \d+ computed by the shards, \d+ reused whole; merged from 3 shards/);
    expect(merged.stdout).toContain('(and windows.parquet, cycles.parquet, trends.parquet, spectra.parquet)');
    const run = readJson(join(out, 'run.json'));
    expect(run.merged).toEqual({ shards: 3, arrived_during_shards: { count: 1, recordings: [late] } });
    expect(await tabled(out)).not.toContain(late);
    // The next round's shards see it, and the merge holds it.
    for (let k = 1; k <= N; k++) shardRun(archive, out, k);
    const next = quern('merge', out, '--jobs', '1');
    expect(next.stdout).not.toMatch(/ARRIVED/);
    expect(readJson(join(out, 'run.json')).merged.arrived_during_shards).toBeNull();
    expect(await tabled(out)).toContain(late);
    // The lab moves to two shards: the parts of three are the stale ones, and merge says so.
    shardRun(archive, out, 1, 2);
    const mixed = quern('merge', out, '--jobs', '1');
    expect(mixed.code).toBe(2);
    expect(mixed.stderr).toMatch(/the parts come from different shard counts: 2 shards \(latest part started [^)]+\) and, older, 3 shards \(latest part started [^)]+\); the parts of 3 shards are stale: delete parts\/\*-of-3\.\* \(cache\/ keeps their stored results\), then merge again; shard 2 of 2 has not written its part yet/);
    expect(readdirSync(join(out, 'parts')).filter((f) => f.startsWith('started-')).sort()).toEqual(['started-1-of-2.json', 'started-1-of-3.json', 'started-2-of-3.json', 'started-3-of-3.json']);
  });
});

describe('merge counts the archive as the latest shard scanned it', () => {
  it('counts a recording that came in after an earlier shard scanned, in its own shard\'s share, as scanned and selected', async () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    const dayOf = (k: number, from: number) => Array.from({ length: 28 }, (_, i) => `2027-01-${String(i + 1).padStart(2, '0')}`).slice(from).find((d) => shardOf(`nightly/${d}/pump-endurance.wav`, N) === k)!;
    // Shard 1 scans the archive as it was; a capture of shard 2's share arrives; shards 2 and 3 scan it.
    shardRun(archive, out, 1);
    const before: number = readJson(join(out, 'parts', `run-1-of-${N}.json`)).counts.scanned;
    const [first] = newNights(archive, [dayOf(2, 0)]);
    shardRun(archive, out, 2);
    shardRun(archive, out, 3);
    const merged = quern('merge', out, '--jobs', '1');
    expect(merged.code).toBe(1); // the sample archive holds one recording that fails
    const run = readJson(join(out, 'run.json'));
    expect(run.recordings.map((r: { recording: string }) => r.recording)).toContain(first);
    expect(run.counts.selected).toBe(before + 1);
    expect(run.counts.scanned).toBe(before + 1);
    expect(run.merged.arrived_during_shards).toBeNull();
    expect(merged.stdout).not.toMatch(/in the archive/);
    // The same within a period that holds none of them: the line tells how many the archive holds, the late capture among them.
    const since = ['--since', '2030-01-01'];
    quern('reduce', archive, '--out', out, '--shard', `1/${N}`, '--jobs', '1', '--quiet', ...since);
    newNights(archive, [dayOf(2, Number(first.slice('nightly/2027-01-'.length, 'nightly/2027-01-'.length + 2)))]);
    for (const k of [2, 3]) quern('reduce', archive, '--out', out, '--shard', `${k}/${N}`, '--jobs', '1', '--quiet', ...since);
    const period = quern('merge', out, '--jobs', '1');
    expect(period.stdout).toMatch(new RegExp(`^quern \\S+: 0 of 0 recordings reduced .*; ${before + 2} in the archive\\.$`, 'm'));
    expect(readJson(join(out, 'run.json')).counts).toMatchObject({ scanned: before + 2, selected: 0 });
  });
});

describe('merge on a first night whose shards did not all write a part', () => {
  it('gives, for a shard with no part, the error its start kept or the lock it left, and what to run', async () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    shardRun(archive, out, 1);
    // Shard 2 is given a spec that cannot be read; shard 3 is killed outright once its run has begun.
    const spec = join(archive, '..', 'broken.yaml');
    writeFileSync(spec, 'spectrum: { segment: [4096\n');
    expect(quern('reduce', archive, '--out', out, '--shard', `2/${N}`, '--spec', spec, '--jobs', '1', '--quiet').code).toBe(2);
    const killed = await stoppedPartWay(archive, out, 3, 'SIGKILL');
    expect(existsSync(join(out, 'parts', 'run-3-of-3.json'))).toBe(false);
    const refused = quern('merge', out, '--jobs', '1');
    expect(refused.code).toBe(2);
    expect(refused.stderr).toMatch(/shard 2 of 3 failed at the start of its run, before taking its lock \(host [^,]+, pid \d+, started [^)]+\): .*broken\.yaml.*; it has written no part: mend that, run shard 2\/3 again \(quern reduce .* --shard 2\/3\), then merge/);
    expect(refused.stderr).toMatch(new RegExp(`shard 3 of 3 did not finish its run \\(host [^,]+, pid ${killed}, started [^;]+; killed or ended by its machine: its lock parts/run-3-of-3\\.lock is left behind: process ${killed} on this host is no longer running\\), so it has written no part: run shard 3/3 again \\(quern reduce .* --shard 3/3\\), then merge`));
    expect(refused.stderr).not.toMatch(/has not written its part yet/);
    // Shard 2 with its spec mended and shard 3 run again: the merge goes through.
    shardRun(archive, out, 2);
    shardRun(archive, out, 3);
    expect(quern('merge', out, '--jobs', '1').code).toBe(1); // the sample archive holds one recording that fails
  });
});

describe('merge of parts that do not belong together', () => {
  it('refuses parts of another quern version or another spec, naming each shard\'s version and each spec\'s shards', async () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    // Shard 2 reduces under a spec of its own (a longer spectrum segment); shard 3's part is one an older quern wrote.
    const spec = join(archive, '..', 'other.yaml');
    writeFileSync(spec, 'spectrum: { segment: 8192 }\n');
    shardRun(archive, out, 1);
    expect(quern('reduce', archive, '--out', out, '--shard', `2/${N}`, '--spec', spec, '--jobs', '1', '--quiet').code).toBe(1);
    shardRun(archive, out, 3);
    const part3 = join(out, 'parts', `run-3-of-${N}.json`);
    const version: string = readJson(part3).version;
    writeFileSync(part3, JSON.stringify({ ...readJson(part3), version: '0.0.1' }));
    const hashes = [1, 2].map((k) => (readJson(join(out, 'parts', `run-${k}-of-${N}.json`)).spec.hash as string).slice(0, 12));
    expect(hashes[0]).not.toBe(hashes[1]);
    const refused = quern('merge', out, '--jobs', '1');
    expect(refused.code).toBe(2);
    expect(refused.stderr).toContain(`the parts were reduced by different versions of quern (shards 1, 2 of 3 by quern ${version}, shard 3 of 3 by quern 0.0.1; this merge is quern ${version}), whose figures differ: run shard 3 of 3 again with quern ${version}, then merge`);
    expect(refused.stderr).toMatch(new RegExp(`the parts were reduced with different specs: shards 1, 3 of 3 with spec ${hashes[0]} from \\(default\\); shard 2 of 3 with spec ${hashes[1]} from \\S*other\\.yaml;`));
    expect(existsSync(join(out, 'features.parquet'))).toBe(false);
  });
});

describe('merge of shards run over a period', () => {
  it('states the recordings of the period as the shards\' sums, in run.json and on the terminal alike', async () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    const since = ['--since', '2026-11-19'];
    for (let k = 1; k <= N; k++) quern('reduce', archive, '--out', out, '--shard', `${k}/${N}`, '--jobs', '1', '--quiet', ...since);
    const parts = Array.from({ length: N }, (_, i) => readJson(join(out, 'parts', `run-${i + 1}-of-${N}.json`)));
    const selected = parts.reduce((n, p) => n + p.counts.selected, 0), reduced = parts.reduce((n, p) => n + p.counts.reduced, 0);
    expect(parts.filter((p) => p.counts.selected > 0).length).toBeGreaterThan(1); // the period's recordings lie in more than one share
    expect(parts.map((p) => p.period.selected)).toEqual(parts.map((p) => p.counts.selected));
    const merged = quern('merge', out, '--jobs', '1');
    const run = readJson(join(out, 'run.json'));
    expect(run.recordings).toHaveLength(selected);
    expect(run.counts).toMatchObject({ selected, reduced });
    expect(run.period.selected).toBe(selected);
    expect(merged.stdout).toMatch(new RegExp(`^quern \\S+: ${reduced} of ${selected} recordings reduced`, 'm'));
    expect(merged.stdout).toMatch(new RegExp(`^  period: .*: ${selected} recordings start in it$`, 'm'));
  });
});
