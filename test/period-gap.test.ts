// A night whose shard failed: its recordings start before the next night's --since period and after what the last finished
// merge's tables held, so no period's tables hold them. Reference: the tables themselves, read by DuckDB after each night
// (which recordings starting before the latest period no features.parquet of the output folder ever held), and a run
// without --since, which the README says takes every recording of the archive into its tables.
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { describe, expect, it } from 'vitest';
import { encodeWav } from '../scripts/wav-file.js';
import { shardOf } from '../pipeline/select/select.js';
import { quern, readJson, tempDir } from './helpers.js';

const FS = 4000;
const DECLARATION = `groups:
  - name: rig
    match: "rig/*.wav"
    sample_rate: ${FS}
    channels:
      - { name: acc, quantity: acceleration, unit: m/s^2, scale: 100, range: [-100, 100], bits: 16, max_frequency_hz: 1000 }
`;

/** A quarter second of a 100 Hz tone, its Broadcast Wave origination at `startMs` (whole seconds). */
const recording = (startMs: number) => {
  const x = new Float64Array(FS / 4);
  for (let i = 0; i < x.length; i++) x[i] = 0.3 * Math.sin(2 * Math.PI * 100 * i / FS);
  return encodeWav({ sampleRate: FS, channels: [x], origination: new Date(startMs) });
};

/** The next whole second after now, once the clock has passed it (so a scan after this began after it). */
async function nextSecond(): Promise<number> {
  const t = Math.ceil((Date.now() + 1) / 1000) * 1000;
  while (Date.now() <= t) await new Promise((r) => setTimeout(r, 20));
  return t;
}

async function tabled(out: string): Promise<string[]> {
  const db = await (await DuckDBInstance.create()).connect();
  return ((await db.runAndReadAll(`select distinct recording from '${join(out, 'features.parquet')}' order by 1`)).getRowObjectsJson() as { recording: string }[]).map((r) => r.recording);
}

function archiveWith() {
  const root = tempDir(), archive = join(root, 'archive'), out = join(root, 'out');
  mkdirSync(join(archive, 'rig'), { recursive: true });
  writeFileSync(join(archive, 'archive.yaml'), DECLARATION);
  writeFileSync(join(archive, 'reduction.yaml'), 'statistics: {}\n');
  /** Recordings `rig/<night>-<i>.wav` starting at `startMs`, some in each of two shards' shares. */
  const night = (name: string, startMs: number, count = 6) => {
    const names = Array.from({ length: count }, (_, i) => `rig/${name}-${i}.wav`);
    for (const r of names) writeFileSync(join(archive, r), recording(startMs));
    if (count >= 6) expect(new Set(names.map((r) => shardOf(r, 2))).size).toBe(2);
    return names;
  };
  return { root, archive, out, night };
}

const iso = (ms: number) => new Date(ms).toISOString();

describe('the recordings of a night whose run did not finish', () => {
  it('are named by the next night\'s shards and merge (terminal and run.json), and a run without --since takes them into its tables', async () => {
    const { root, archive, out, night } = archiveWith();
    const shard = (k: number, ...more: string[]) => quern('reduce', archive, '--out', out, '--shard', `${k}/2`, '--jobs', '1', '--quiet', ...more);
    const everTabled = new Set<string>();

    // Night 0: both shards and the merge finish.
    const t0 = Math.floor(Date.now() / 1000) * 1000 - 3_600_000;
    night('n0', t0);
    for (const k of [1, 2]) expect(shard(k, '--since', iso(t0 - 60_000)).code).toBe(0);
    expect(quern('merge', out, '--jobs', '1').code).toBe(0);
    for (const r of await tabled(out)) everTabled.add(r);

    // Night 1: shard 2 fails (its spec cannot be read), so the merge refuses and night 1 reaches no tables.
    const t1 = await nextSecond();
    const n1 = night('n1', t1);
    expect(shard(1, '--since', iso(t1)).code).toBe(0);
    expect(shard(2, '--since', iso(t1), '--spec', join(root, 'missing.yaml')).code).toBe(2);
    expect(quern('merge', out, '--jobs', '1').code).toBe(2);

    // Night 2: both shards finish, and the merge.
    const t2 = await nextSecond();
    night('n2', t2);
    const parts = [1, 2].map((k) => { const r = shard(k, '--since', iso(t2)); expect(r.code).toBe(0); return readJson(join(out, 'parts', `run-${k}-of-2.json`)); });
    const merged = quern('merge', out, '--jobs', '1');
    expect(merged.code).toBe(0);
    for (const r of await tabled(out)) everTabled.add(r);

    // Outside check: the recordings starting before night 2's period that no features.parquet held are night 1's, all of them.
    const allBefore = [...Array.from({ length: 6 }, (_, i) => `rig/n0-${i}.wav`), ...n1];
    const neverTabled = allBefore.filter((r) => !everTabled.has(r)).sort();
    expect(neverTabled).toEqual([...n1].sort());

    // Each shard names its share of them, the merge all of them.
    for (const [i, p] of parts.entries()) expect(p.period.gap.recordings.map((r: any) => r.recording).sort()).toEqual(n1.filter((r) => shardOf(r, 2) === i + 1).sort());
    const run = readJson(join(out, 'run.json'));
    expect(run.period.gap).toMatchObject({ count: 6, earliest_start: iso(t1), latest_start: iso(t1) });
    expect(run.period.gap.recordings.map((r: any) => r.recording).sort()).toEqual(neverTabled);
    expect(run.period.gap.recordings.every((r: any) => r.group === 'rig' && r.start_time === iso(t1))).toBe(true);
    expect(Date.parse(run.period.gap.covered_until)).toBeLessThanOrEqual(t1);
    expect(merged.stdout).toMatch(/ {2}GAP {5}6 recordings \(started .* to .*; rig\/n1-\d\.wav, .*\) start after the period the finished runs before this one covered \(to [^)]+\) and before this period: no period's tables hold them .*; run once without --since, or with --since \S+ or earlier, to put them in the tables; see run\.json \(period\.gap\)/);

    // Night 3: both shards and the merge finish again; night 1's recordings are still in no tables, so they are named again.
    const t3 = await nextSecond();
    night('n3', t3);
    for (const k of [1, 2]) expect(shard(k, '--since', iso(t3)).code).toBe(0);
    const third = quern('merge', out, '--jobs', '1');
    expect(third.code).toBe(0);
    for (const r of await tabled(out)) everTabled.add(r);
    expect(n1.filter((r) => everTabled.has(r))).toEqual([]);
    expect(third.stdout).toMatch(/ {2}GAP {5}6 recordings .* no period's tables hold them/);
    expect(readJson(join(out, 'run.json')).period.gap.recordings.map((r: any) => r.recording).sort()).toEqual(neverTabled);

    // Taking the advice: the shards without --since, then the merge, put night 1 in the tables.
    for (const k of [1, 2]) expect(shard(k).code).toBe(0);
    expect(quern('merge', out, '--jobs', '1').code).toBe(0);
    expect(await tabled(out)).toEqual(expect.arrayContaining(n1));

    // A night after a finished one has no gap to name.
    for (const k of [1, 2]) expect(shard(k, '--since', iso(t3)).code).toBe(0);
    const clean = quern('merge', out, '--jobs', '1');
    expect(clean.code).toBe(0);
    expect(clean.stdout).not.toContain('GAP');
    expect(readJson(join(out, 'run.json')).period.gap).toBeUndefined();
  });

  it('are named by every --since run until a run\'s period takes them in, and then no more', async () => {
    const { root, archive, out, night } = archiveWith();
    const reduce = (...more: string[]) => quern('reduce', archive, '--out', out, '--jobs', '1', '--quiet', ...more);
    const everTabled = new Set<string>();
    const table = async () => { for (const r of await tabled(out)) everTabled.add(r); };

    // Night 0 finishes.
    const t0 = Math.floor(Date.now() / 1000) * 1000 - 3_600_000;
    night('n0', t0, 2);
    expect(reduce('--since', iso(t0 - 60_000)).code).toBe(0);
    await table();
    // Night 1 fails: its spec cannot be read.
    const t1 = await nextSecond();
    const n1 = night('n1', t1, 2);
    expect(reduce('--since', iso(t1), '--spec', join(root, 'missing.yaml')).code).toBe(2);

    // Nights 2 and 3 finish, each with its own period; both name night 1's recordings (terminal, run.json, --log json).
    for (const name of ['n2', 'n3']) {
      const t = await nextSecond();
      night(name, t, 2);
      const r = quern('reduce', archive, '--out', out, '--jobs', '1', '--log', 'json', '--since', iso(t));
      expect(r.code, r.stderr).toBe(0);
      await table();
      // Outside check: no features.parquet of the folder has held them so far.
      expect(n1.filter((x) => everTabled.has(x))).toEqual([]);
      expect(r.stdout).toMatch(/ {2}GAP {5}2 recordings .* no period's tables hold them .*run once without --since, or with --since \S+ or earlier/);
      const gap = readJson(join(out, 'run.json')).period.gap;
      expect(gap.recordings.map((x: any) => x.recording).sort()).toEqual([...n1].sort());
      expect(Date.parse(gap.covered_until)).toBeLessThanOrEqual(t1);
      const summary = r.stderr.trim().split('\n').map((l) => JSON.parse(l)).find((e) => e.event === 'summary');
      expect(summary.gap).toEqual({ count: 2, earliest_start: iso(t1), latest_start: iso(t1) });
    }

    // Taking the advice: a run with --since at night 1's start puts its recordings in the tables.
    const taking = reduce('--since', iso(t1));
    expect(taking.code).toBe(0);
    expect(taking.stdout).not.toContain('GAP');
    expect(await tabled(out)).toEqual(expect.arrayContaining(n1));

    // From then on no --since run names them.
    const t4 = await nextSecond();
    night('n4', t4, 2);
    const after = reduce('--since', iso(t4));
    expect(after.code).toBe(0);
    expect(after.stdout).not.toContain('GAP');
    expect(readJson(join(out, 'run.json')).period.gap).toBeUndefined();
  });

  it('are named by the next whole run when the night\'s run never ran, again on the next night, and not once a run without --since took them in', async () => {
    const { archive, out, night } = archiveWith();
    const reduce = (...more: string[]) => quern('reduce', archive, '--out', out, '--jobs', '1', '--quiet', ...more);
    const t0 = Math.floor(Date.now() / 1000) * 1000 - 3_600_000;
    night('n0', t0);
    expect(reduce('--since', iso(t0 - 60_000)).code).toBe(0);
    const t1 = await nextSecond();
    const n1 = night('n1', t1, 2);
    // No run on night 1.
    const t2 = await nextSecond();
    night('n2', t2, 2);
    const r = reduce('--since', iso(t2));
    expect(r.code).toBe(0);
    expect(r.stdout).toContain('no period\'s tables hold them');
    expect(readJson(join(out, 'run.json')).period.gap.recordings.map((x: any) => x.recording).sort()).toEqual([...n1].sort());
    expect(await tabled(out)).not.toEqual(expect.arrayContaining(n1));
    const again = reduce('--since', iso(t2));
    expect(again.code).toBe(0);
    expect(again.stdout).toContain('no period\'s tables hold them');
    // A run without --since takes every recording in (README), and after it no gap is named.
    expect(reduce().code).toBe(0);
    expect(await tabled(out)).toEqual(expect.arrayContaining(n1));
    const later = reduce('--since', iso(t2));
    expect(later.code).toBe(0);
    expect(later.stdout).not.toContain('GAP');
  });

  it('leaves unnamed what lies before the first run\'s period, though a bounded run over an older week covered some of it', async () => {
    const { archive, out, night } = archiveWith();
    const reduce = (...more: string[]) => quern('reduce', archive, '--out', out, '--jobs', '1', '--quiet', ...more);
    const day = 86_400_000, t0 = Math.floor(Date.now() / 1000) * 1000 - 3_600_000;
    night('old', t0 - 30 * day, 2);
    night('mid', t0 - 10 * day, 2);
    night('n0', t0, 2);
    // The first night asks for its own period alone, then a lab reduces an older week bounded by --until.
    expect(reduce('--since', iso(t0 - 60_000)).code).toBe(0);
    expect(reduce('--since', iso(t0 - 31 * day), '--until', iso(t0 - 29 * day)).code).toBe(0);
    const t1 = await nextSecond();
    night('n1', t1, 2);
    const r = reduce('--since', iso(t1));
    expect(r.code).toBe(0);
    // The week between was never asked for: no night was missed.
    expect(r.stdout).not.toContain('GAP');
    expect(await tabled(out)).not.toEqual(expect.arrayContaining(['rig/mid-0.wav']));
  });
});
