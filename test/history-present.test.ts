// What incremental runs carry over: the trends' history holds the recordings in the archive now, under their groups' present
// names. Reference: the README's promise that two output folders over the same archive give the same tables as a fresh
// run's (deleted recordings drop out, the outputs' digest covers each recording's group), checked row for row.
import { mkdirSync, readFileSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { describe, expect, it } from 'vitest';
import { encodeWav } from '../scripts/wav-file.js';
import { quern, readJson, tempDir } from './helpers.js';

const FS = 12800;

/**
 * Night n (1–6): a 400 Hz tone and seeded noise; night 1 twice as loud, so it moves any baseline it is part of; night 6 with
 * a strong 2 kHz tone added, so that it reads changed and the report pictures its channel.
 */
function night(n: number): Buffer {
  let a = 2000 + n;
  const u = () => { a = (a + 0x6d2b79f5) >>> 0; let t = Math.imul(a ^ (a >>> 15), a | 1); t ^= t + Math.imul(t ^ (t >>> 7), t | 61); return ((t ^ (t >>> 14)) >>> 0) / 4294967296; };
  const gain = n === 1 ? 2 : 1;
  const x = new Float64Array(FS / 2);
  const tone = n === 6 ? 2 : 0;
  for (let i = 0; i < x.length; i++) x[i] = (gain * (0.6 * Math.sin(2 * Math.PI * 400 * i / FS) + 0.2 * Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u())) + tone * Math.sin(2 * Math.PI * 2000 * i / FS)) / 10;
  return encodeWav({ sampleRate: FS, channels: [x], origination: new Date(Date.UTC(2026, 10, n, 2)) });
}
const name = (n: number) => `rig/2026-11-0${n}.wav`;

const declaration = ({ group = 'rig', scale = 200 } = {}) => `groups:
  - name: ${group}
    match: "rig/*.wav"
    sample_rate: ${FS}
    labels: { line: "3" }
    channels:
      - { name: acc, quantity: acceleration, unit: m/s^2, scale: ${scale}, range: [-${scale}, ${scale}], bits: 16, max_frequency_hz: 5000 }
`;
// The spectrum keeps each night's spectrum for the report's "what changed" pictures.
const SPEC = `statistics: {}
spectrum: { segment: 1024 }
trends: { features: [rms, peak, crest_factor, kurtosis], baseline: { first: 3 } }
`;

/** An archive of the six nights, its spec beside it. */
function nights() {
  const root = tempDir(), archive = join(root, 'archive');
  mkdirSync(join(archive, 'rig'), { recursive: true });
  writeFileSync(join(archive, 'archive.yaml'), declaration());
  writeFileSync(join(archive, 'reduction.yaml'), SPEC);
  for (let n = 1; n <= 6; n++) writeFileSync(join(archive, name(n)), night(n));
  return { root, archive };
}

async function rows(path: string): Promise<Record<string, unknown>[]> {
  const db = await (await DuckDBInstance.create()).connect();
  return (await db.runAndReadAll(`select * from '${path}' order by all`)).getRowObjectsJson() as Record<string, unknown>[];
}
const reduce = (archive: string, out: string, ...more: string[]) => {
  const r = quern('reduce', archive, '--out', out, '--jobs', '1', '--quiet', ...more);
  expect(r.stderr).toBe('');
  expect(r.code).toBe(0);
  return readJson(join(out, 'run.json'));
};
/** trends.parquet, features.parquet and what changed, of two output folders, equal value for value. */
async function expectSameTrends(out: string, fresh: string) {
  const trends = await rows(join(out, 'trends.parquet'));
  expect(trends.length).toBeGreaterThan(0);
  expect(trends).toEqual(await rows(join(fresh, 'trends.parquet')));
  expect(await rows(join(out, 'features.parquet'))).toEqual(await rows(join(fresh, 'features.parquet')));
  // What is new is told against each folder's own previous report, so a fresh folder finds everything new: left out here.
  expect(changesApartFromNews(join(out, 'quality.json'))).toEqual(changesApartFromNews(join(fresh, 'quality.json')));
}
function changesApartFromNews(qualityJson: string) {
  const { news: _news, items, ...rest } = readJson(qualityJson).changes;
  return { ...rest, items: items.map(({ new: _new, ...item }: Record<string, unknown>) => item) };
}

describe('recordings gone from the archive leave the trends', () => {
  it('a deleted night no longer shapes baselines, scores or the report\'s pictures', async () => {
    const { root, archive } = nights(), out = join(root, 'out'), fresh = join(root, 'fresh');
    reduce(archive, out);
    // Night 1 is in the baseline of every channel feature, and in the pictures of what changed.
    expect((await rows(join(out, 'trends.parquet'))).filter((r) => r.recording === name(1))).not.toEqual([]);
    rmSync(join(archive, name(1)));
    reduce(archive, out);
    reduce(archive, fresh);
    await expectSameTrends(out, fresh);
    expect((await rows(join(out, 'trends.parquet'))).some((r) => r.recording === name(1))).toBe(false);
    // The report, its "what changed" pictures included, is the fresh run's but for the run's id and time, and what is new
    // (told against each folder's previous report: everything in a fresh folder).
    const report = (dir: string) => readFileSync(join(dir, 'quality.html'), 'utf8').replaceAll(readJson(join(dir, 'run.json')).run_id, 'RUN').replace(/\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{3}Z/g, 'WHEN')
      .replace(/; (all|none|\d+) new[^;]*;/, '; NEWS;').replaceAll(' data-new="true"', '').replaceAll(' <b>new</b>', '');
    expect(report(out)).toContain('Spectra across recordings');
    expect(report(out)).toEqual(report(fresh));
  }, 120_000);

  it('a renamed recording is one recording under its new name, not two', async () => {
    const { root, archive } = nights(), out = join(root, 'out'), fresh = join(root, 'fresh');
    reduce(archive, out);
    renameSync(join(archive, name(2)), join(archive, 'rig/2026-11-02-b.wav'));
    const run = reduce(archive, out);
    expect(run.recordings.find((r: any) => r.recording === 'rig/2026-11-02-b.wav').why).toMatch(/^new recording/);
    reduce(archive, fresh);
    await expectSameTrends(out, fresh);
  }, 120_000);

  it('a deleted night is not held at its old scale after a declaration change recomputes the rest', async () => {
    const { root, archive } = nights(), out = join(root, 'out'), fresh = join(root, 'fresh');
    reduce(archive, out);
    rmSync(join(archive, name(1)));
    writeFileSync(join(archive, 'archive.yaml'), declaration({ scale: 400 }));
    const run = reduce(archive, out);
    expect(run.recordings.every((r: any) => r.why === 'declaration changed')).toBe(true);
    reduce(archive, fresh);
    await expectSameTrends(out, fresh);
  }, 120_000);

  it('a --since run reads the history of the recordings present, stored before its period', async () => {
    const { root, archive } = nights(), out = join(root, 'out'), never = join(root, 'never');
    reduce(archive, out);
    rmSync(join(archive, name(1)));
    // Another output folder that never saw night 1: the same archive, so the same history.
    reduce(archive, never);
    const a = reduce(archive, out, '--since', '2026-11-05'), b = reduce(archive, never, '--since', '2026-11-05');
    expect(a.counts.selected).toBe(2);
    expect(b.counts.selected).toBe(2);
    await expectSameTrends(out, never);
  }, 120_000);

  it('shards and quern merge: the history is every shard\'s present recordings, with and without a period', async () => {
    const { root, archive } = nights(), out = join(root, 'out'), fresh = join(root, 'fresh'), never = join(root, 'never');
    const shards = (...more: string[]) => {
      for (const k of [1, 2]) expect(quern('reduce', archive, '--out', out, '--shard', `${k}/2`, '--jobs', '1', '--quiet', ...more).code).toBe(0);
      const r = quern('merge', out, '--jobs', '1');
      expect(r.stderr).toBe('');
      expect(r.code).toBe(0);
    };
    shards();
    rmSync(join(archive, name(1)));
    shards();
    reduce(archive, fresh);
    await expectSameTrends(out, fresh);
    // Each shard names the recordings of its share its lines leave out: merge reads their stored history.
    shards('--since', '2026-11-05');
    const parts = [1, 2].map((k) => readJson(join(out, 'parts', `run-${k}-of-2.json`)));
    expect(parts.flatMap((p) => [...p.recordings, ...p.unselected].map((r: any) => r.recording)).sort()).toEqual([2, 3, 4, 5, 6].map(name));
    reduce(archive, never);
    reduce(archive, never, '--since', '2026-11-05');
    await expectSameTrends(out, never);
  }, 180_000);
});

describe('a group renamed in archive.yaml', () => {
  it('recomputes nothing, and the tables and trends carry the new name as a fresh run\'s do', async () => {
    const { root, archive } = nights(), out = join(root, 'out'), fresh = join(root, 'fresh');
    reduce(archive, out);
    writeFileSync(join(archive, 'archive.yaml'), declaration({ group: 'test-rig' }));
    const run = reduce(archive, out);
    expect(run.counts.recomputed).toBe(0);
    expect(run.recordings.map((r: any) => [r.group, r.why])).toEqual(Array(6).fill(['test-rig', 'unchanged']));
    expect(run.outputs.rewritten).toBe(true);
    reduce(archive, fresh);
    await expectSameTrends(out, fresh);
    expect(new Set((await rows(join(out, 'trends.parquet'))).map((r) => r.group))).toEqual(new Set(['test-rig']));
    expect(readJson(join(out, 'quality.json')).recordings.map((r: any) => r.group)).toEqual(Array(6).fill('test-rig'));
    // Unchanged since: the outputs are left as they are.
    expect(reduce(archive, out).outputs.rewritten).toBe(false);
  }, 120_000);
});
