// Nightly --since runs after an upgrade, a spec change or a corrected declaration: the stored recordings holding the
// baselines' places are recomputed, so the night gets its verdicts the same morning. Reference: the README's promise that an
// output folder gives the trends a fresh run gives, checked row for row against a real fresh run without --since over the same
// archive; the baseline rule (the first 3 usable recordings by start time) is the README's own.
import { spawnSync } from 'node:child_process';
import { cpSync, mkdirSync, readFileSync, rmSync, symlinkSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { describe, expect, it } from 'vitest';
import { encodeWav } from '../scripts/wav-file.js';
import { storedText } from '../pipeline/trends/stale-cause.js';
import { quern, readJson, repo, tempDir } from './helpers.js';

const FS = 12800;
const TONE_FROM = 3; // a 3200 Hz tone (inside both envelope filters below) appears on this night and stays

/** Night n's recording at `fs`: a 300 Hz tone and seeded noise, then from TONE_FROM on a strong tone in the envelope's band. */
function night(n: number, fs = FS): Buffer {
  let a = 4000 + n;
  const u = () => { a = (a + 0x6d2b79f5) >>> 0; let t = Math.imul(a ^ (a >>> 15), a | 1); t ^= t + Math.imul(t ^ (t >>> 7), t | 61); return ((t ^ (t >>> 14)) >>> 0) / 4294967296; };
  const x = new Float64Array(fs);
  for (let i = 0; i < fs; i++) {
    const t = i / fs;
    x[i] = (1.5 * Math.sin(2 * Math.PI * 300 * t) + 0.5 * Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u()) + (n >= TONE_FROM ? 3 * Math.sin(2 * Math.PI * 3200 * t) : 0)) / 100;
  }
  return encodeWav({ sampleRate: fs, channels: [x], origination: new Date(Date.UTC(2026, 10, 1 + n, 2)) });
}
const day = (n: number) => `2026-11-${String(1 + n).padStart(2, '0')}`;
const name = (n: number) => `rig/${day(n)}.wav`;
const NIGHTS = 6;

const declaration = (sampleRate: string) => `groups:
  - name: rig
    match: "rig/*.wav"
${sampleRate}    channels:
      - { name: acc, quantity: acceleration, unit: m/s^2, scale: 100, range: [-100, 100], bits: 16, max_frequency_hz: 5000 }
`;
const DECLARED_RATE = declaration(`    sample_rate: ${FS}\n`);
const spec = (low: number, high: number) => `statistics: {}
envelope: { filter: { kind: bandpass, order: 4, low_hz: ${low}, high_hz: ${high}, zero_phase: true } }
trends: { features: [rms, env_rms] }
`;

/** The archive's nights 0 to NIGHTS − 1, its declaration, and a spec file beside it. */
function rig(archiveYaml = DECLARED_RATE) {
  const root = tempDir(), archive = join(root, 'archive');
  mkdirSync(join(archive, 'rig'), { recursive: true });
  writeFileSync(join(archive, 'archive.yaml'), archiveYaml);
  writeFileSync(join(root, 'spec.yaml'), spec(2500, 4500));
  for (let n = 0; n < NIGHTS; n++) writeFileSync(join(archive, name(n)), night(n));
  return { root, archive, out: join(root, 'out'), fresh: join(root, 'fresh') };
}

/**
 * quern's built package copied with another version in package.json (its code the same): what an output folder holds after
 * an upgrade is entries stored by the version before.
 */
function olderQuern(root: string, version = '0.1.0-older'): (...args: string[]) => ReturnType<typeof quern> {
  const pkg = join(root, 'older-quern');
  mkdirSync(pkg);
  cpSync(join(repo, 'dist'), join(pkg, 'dist'), { recursive: true, filter: (p) => !/[\\/]dist[\\/](test|bench)$/.test(p) });
  cpSync(join(repo, 'schemas'), join(pkg, 'schemas'), { recursive: true });
  symlinkSync(join(repo, 'node_modules'), join(pkg, 'node_modules'));
  const manifest = JSON.parse(readFileSync(join(repo, 'package.json'), 'utf8'));
  writeFileSync(join(pkg, 'package.json'), JSON.stringify({ ...manifest, version }));
  return (...args) => {
    // The helpers run the repository's build; the same command from the copied package.
    const r = spawnSync(process.execPath, [join(pkg, 'dist', 'pipeline', 'cli.js'), ...args], { encoding: 'utf8', env: { ...process.env, FORCE_COLOR: '0' } });
    return { code: r.status, stdout: r.stdout, stderr: r.stderr, signal: r.signal };
  };
}

async function rows(sql: string): Promise<Record<string, unknown>[]> {
  const db = await (await DuckDBInstance.create()).connect();
  return (await db.runAndReadAll(sql)).getRowObjectsJson() as Record<string, unknown>[];
}
const trendRows = (out: string, where = 'true') => rows(`select * from '${out}/trends.parquet' where ${where} order by all`);

describe('a nightly --since run whose baselines were stored under another version, other options or another declaration', () => {
  it('after an upgrade, recomputes the first 3 recordings alone and gives a fresh run\'s trends; an unchanged re-run recomputes nothing', async () => {
    const { root, archive, out, fresh } = rig();
    const older = olderQuern(root);
    const reduce = (dir: string, ...more: string[]) => quern('reduce', archive, '--out', dir, '--spec', join(root, 'spec.yaml'), '--jobs', '1', ...more);
    expect(older('reduce', archive, '--out', out, '--spec', join(root, 'spec.yaml'), '--jobs', '1', '--quiet').code).toBe(0);
    expect(readJson(join(out, 'run.json')).version).toBe('0.1.0-older');

    // The first night after the upgrade: the period holds night 6 alone.
    writeFileSync(join(archive, name(NIGHTS)), night(NIGHTS));
    const r = reduce(out, '--since', day(NIGHTS), '--exit-on', 'changed', '--log', 'json');
    // The tone is in the envelope's band since night 3: changed against the baseline of nights 0–2, so --exit-on fires (3).
    expect(r.code).toBe(3);
    expect(JSON.parse(r.stderr.trim().split('\n').at(-1)!)).toMatchObject({ event: 'summary', recomputed_for_baselines: { count: 3, failed: 0 } });
    expect(r.stdout).toContain('  BASELINE recomputed 3 recordings holding baseline places, stored by another version of quern, so the baselines form under this version, spec and declaration; see run.json (period.recomputed_for_baselines)');
    expect(r.stdout).toMatch(/CHANGED rig acc env_rms/);
    expect(r.stdout).not.toMatch(/no baseline/);
    const run = readJson(join(out, 'run.json'));
    expect(run.period.recomputed_for_baselines).toEqual({
      count: 3, causes: { version: 3, options: 0, declaration: 0 }, failed: 0,
      recordings: [0, 1, 2].map((n) => ({ recording: name(n), group: 'rig', stored: ['version'], why: `tool version changed (0.1.0-older → ${run.version})`, status: 'reduced' })),
    });
    // Kept out of the period's lines and tables: those hold night 6 alone.
    expect(run.recordings.map((x: any) => x.recording)).toEqual([name(NIGHTS)]);
    expect((await rows(`select distinct recording from '${out}/features.parquet'`)).map((x) => x.recording)).toEqual([name(NIGHTS)]);
    expect(readJson(join(out, 'quality.json')).changes.stale_baselines).toBe(0);

    // A fresh whole run over the same archive: night 6's rows of trends.parquet are the same, value for value.
    expect(reduce(fresh, '--quiet').code).toBe(0);
    const nightly = await trendRows(out);
    expect(nightly.map((x) => [x.feature, x.verdict])).toEqual([['env_rms', 'changed'], ['rms', 'changed']]);
    expect(nightly).toEqual(await trendRows(fresh, `recording = '${name(NIGHTS)}'`));

    // The same night again, nothing new: nothing recomputed, the same trends.
    const again = reduce(out, '--since', day(NIGHTS));
    expect(again.code).toBe(0);
    expect(again.stdout).not.toMatch(/BASELINE/);
    const quiet = readJson(join(out, 'run.json'));
    expect(quiet.period.recomputed_for_baselines).toEqual({ count: 0, causes: { version: 0, options: 0, declaration: 0 }, failed: 0, recordings: [] });
    expect(quiet.counts.recomputed).toBe(0);
    expect(await trendRows(out)).toEqual(nightly);

    // The night after: the baselines hold, nights 3–5 stay as the older version stored them, and nothing is recomputed for them.
    writeFileSync(join(archive, name(NIGHTS + 1)), night(NIGHTS + 1));
    const next = reduce(out, '--since', day(NIGHTS + 1), '--quiet');
    expect(next.code).toBe(0);
    expect(readJson(join(out, 'run.json')).period.recomputed_for_baselines.count).toBe(0);
    rmSync(fresh, { recursive: true, force: true });
    expect(reduce(fresh, '--quiet').code).toBe(0);
    expect(await trendRows(out)).toEqual(await trendRows(fresh, `recording = '${name(NIGHTS + 1)}'`));
  }, 180_000);

  it('after the envelope filter changed, recomputes the envelope of the first 3 recordings alone, and gives a fresh run\'s trends', async () => {
    const { root, archive, out, fresh } = rig();
    writeFileSync(join(root, 'new.yaml'), spec(2000, 5000));
    const reduce = (dir: string, specFile: string, ...more: string[]) => quern('reduce', archive, '--out', dir, '--spec', join(root, specFile), '--jobs', '1', ...more);
    expect(reduce(out, 'spec.yaml', '--quiet').code).toBe(0);
    writeFileSync(join(archive, name(NIGHTS)), night(NIGHTS));
    const r = reduce(out, 'new.yaml', '--since', day(NIGHTS));
    expect(r.code).toBe(0);
    expect(r.stdout).toContain('  BASELINE recomputed 3 recordings holding baseline places, stored under other spec options, so the baselines form under this version, spec and declaration');
    const renewed = readJson(join(out, 'run.json')).period.recomputed_for_baselines;
    expect(renewed).toMatchObject({ count: 3, causes: { version: 0, options: 3, declaration: 0 }, failed: 0 });
    expect(renewed.recordings.map((x: any) => [x.recording, x.stored, x.why])).toEqual([0, 1, 2].map((n) => [name(n), ['options'], 'spec changed for envelope']));
    expect(reduce(fresh, 'new.yaml', '--quiet').code).toBe(0);
    const nightly = await trendRows(out);
    expect(nightly.map((x) => [x.feature, x.verdict])).toEqual([['env_rms', 'changed'], ['rms', 'changed']]);
    expect(nightly).toEqual(await trendRows(fresh, `recording = '${name(NIGHTS)}'`));
  }, 180_000);

  it('after the quality thresholds changed, a baseline night stored as failing is recomputed and joins the baseline as a fresh run forms it', async () => {
    const { root, archive, out, fresh } = rig();
    // Night 1 holds five isolated spikes: 0.04 % of its samples, a fail under a spike limit of 0.01 %, a warn under the default 0.1 %.
    const spiky = night(1), data = spiky.indexOf('data') + 8;
    for (let k = 0; k < 5; k++) spiky.writeInt16LE(30000, data + 2 * (1000 + 2000 * k));
    writeFileSync(join(archive, name(1)), spiky);
    writeFileSync(join(root, 'strict.yaml'), `${spec(2500, 4500)}quality: { spikes: { fail_fraction: 0.0001 } }\n`);
    const reduce = (dir: string, specFile: string, ...more: string[]) => quern('reduce', archive, '--out', dir, '--spec', join(root, specFile), '--jobs', '1', ...more);
    expect(reduce(out, 'strict.yaml', '--quiet').code).toBe(0);
    expect(readJson(join(out, 'quality.json')).recordings.find((r: any) => r.recording === name(1)).severity).toBe('fail');
    writeFileSync(join(archive, name(NIGHTS)), night(NIGHTS));
    const r = reduce(out, 'spec.yaml', '--since', day(NIGHTS));
    expect(r.code).toBe(0);
    const renewed = readJson(join(out, 'run.json')).period.recomputed_for_baselines;
    expect(renewed).toMatchObject({ count: 3, causes: { version: 0, options: 3, declaration: 0 }, failed: 0 });
    expect(renewed.recordings.map((x: any) => x.recording)).toEqual([0, 1, 2].map(name));
    expect(reduce(fresh, 'spec.yaml', '--quiet').code).toBe(0);
    expect(await trendRows(out)).toEqual(await trendRows(fresh, `recording = '${name(NIGHTS)}'`));
  }, 180_000);

  it('after a corrected declaration, a baseline recording that fails when recomputed leaves its place to the next usable one, as a fresh run forms it', async () => {
    // Night 1 was captured at 16 kHz; archive.yaml declared no rate, so every night was reduced at its file's own.
    const { root, archive, out, fresh } = rig(declaration(''));
    writeFileSync(join(archive, name(1)), night(1, 16000));
    const reduce = (dir: string, ...more: string[]) => quern('reduce', archive, '--out', dir, '--spec', join(root, 'spec.yaml'), '--jobs', '1', ...more);
    expect(reduce(out, '--quiet').code).toBe(0);
    // The rig's rate is declared now: night 1 no longer fits its group's declaration.
    writeFileSync(join(archive, 'archive.yaml'), DECLARED_RATE);
    writeFileSync(join(archive, name(NIGHTS)), night(NIGHTS));
    const r = reduce(out, '--since', day(NIGHTS));
    // Night 1's failure is stored and told as any recording's (exit code 1); the baseline is nights 0, 2 and 3.
    expect(r.code).toBe(1);
    expect(r.stdout).toMatch(/  BASELINE recomputed 4 recordings holding baseline places, stored under another declaration of their group, .*; 1 failed; see run\.json/);
    expect(r.stdout).toMatch(new RegExp(`  FAILED  ${name(1)} \\(recomputed for a baseline\\): .+`));
    const renewed = readJson(join(out, 'run.json')).period.recomputed_for_baselines;
    expect(renewed).toMatchObject({ count: 4, causes: { version: 0, options: 0, declaration: 4 }, failed: 1 });
    expect(renewed.recordings.map((x: any) => [x.recording, x.status])).toEqual([[name(0), 'reduced'], [name(1), 'failed'], [name(2), 'reduced'], [name(3), 'reduced']]);
    expect(reduce(fresh, '--quiet').code).toBe(1);
    const nightly = await trendRows(out);
    expect(nightly).toEqual(await trendRows(fresh, `recording = '${name(NIGHTS)}'`));
    expect(nightly.every((x) => x.baseline != null)).toBe(true);
    expect(readJson(join(out, 'quality.json')).changes.stale_baselines).toBe(0);
  }, 180_000);

  it('with --until, recomputes nothing and names the real cause with what to run', () => {
    const { root, archive, out } = rig();
    writeFileSync(join(root, 'new.yaml'), spec(2000, 5000));
    expect(quern('reduce', archive, '--out', out, '--spec', join(root, 'spec.yaml'), '--jobs', '1', '--quiet').code).toBe(0);
    const r = quern('reduce', archive, '--out', out, '--spec', join(root, 'new.yaml'), '--jobs', '1', '--since', day(NIGHTS - 1), '--until', day(NIGHTS));
    expect(r.code).toBe(0);
    expect(r.stdout).toContain('  1 channel feature has no baseline: its baseline recordings were reduced under other spec options; run once without --since, or with --since alone and unsharded, to recompute them');
    expect(r.stdout).not.toMatch(/BASELINE/);
    expect(readJson(join(out, 'run.json')).period.recomputed_for_baselines).toBeUndefined();
    expect(readJson(join(out, 'quality.json')).changes).toMatchObject({ stale_baselines: 1, stale_causes: { version: 0, options: 1, declaration: 0 } });
  }, 120_000);

  it('names each cause with its count where they differ', () => {
    expect(storedText({ version: 3, options: 2, declaration: 0 })).toBe('by another version of quern (3) or under other spec options (2)');
    expect(storedText({ version: 1, options: 1, declaration: 2 })).toBe('by another version of quern (1), under other spec options (1) or under another declaration of their group (2)');
    expect(storedText({ version: 0, options: 0, declaration: 0 })).toBeNull();
  });
});

describe('a --since run after cache/ was deleted, its period holding fewer recordings than a baseline needs', () => {
  it('says its baselines are forming from this period only, not formed', () => {
    const { root, archive, out } = rig();
    const reduce = (...more: string[]) => quern('reduce', archive, '--out', out, '--spec', join(root, 'spec.yaml'), '--jobs', '1', ...more);
    expect(reduce('--quiet').code).toBe(0);
    rmSync(join(out, 'cache'), { recursive: true, force: true });
    // One night in the period, three needed: nothing formed.
    const r = reduce('--since', day(NIGHTS - 1));
    expect(r.code).toBe(0);
    expect(r.stdout).toContain('  2 channel features have their baselines forming from this period only: no earlier results are stored; run once without --since to build them from the whole archive');
    expect(r.stdout).not.toMatch(/formed from this period only/);
    expect(readJson(join(out, 'quality.json')).changes).toMatchObject({ period_baselines: 2, period_baselines_forming: 2 });
  }, 60_000);
});
