// Damaged results are never used: every stored entry carries checksums; a corrupted or cut-off entry is reported in run.json
// and recomputed, and the tables equal a clean run's. A write that fails keeps the previous outputs.
import { spawnSync } from 'node:child_process';
import { cpSync, existsSync, readdirSync, readFileSync, rmSync, statSync, truncateSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { describe, expect, it } from 'vitest';
import { storedEntries } from '../pipeline/plan/cache.js';
import { scanPack, type Located } from '../pipeline/store/pack.js';
import { quern, readJson, repo, sampleArchiveCopy } from './helpers.js';

async function table(path: string): Promise<Record<string, unknown>[]> {
  const db = await (await DuckDBInstance.create()).connect();
  return (await db.runAndReadAll(`select * from '${path}' order by all`)).getRowObjectsJson() as Record<string, unknown>[];
}

async function records(pack: string): Promise<Located[]> {
  const found: Located[] = [];
  await scanPack(pack, (r) => found.push(r));
  return found;
}

/** A reduced copy of the sample archive, and a clean reduction of it elsewhere to compare with. */
async function reducedTwice(spec?: string) {
  const archive = sampleArchiveCopy(), out = join(archive, '..', 'out'), clean = join(archive, '..', 'clean');
  if (spec) writeFileSync(join(archive, 'reduction.yaml'), spec);
  quern('reduce', archive, '--out', out, '--quiet');
  quern('reduce', archive, '--out', clean, '--quiet');
  return { archive, out, clean, pack: join(out, 'cache', 'entries.pack') };
}

async function expectSameTables(out: string, clean: string) {
  expect(await table(join(out, 'features.parquet'))).toEqual(await table(join(clean, 'features.parquet')));
  expect(await table(join(out, 'windows.parquet'))).toEqual(await table(join(clean, 'windows.parquet')));
  // A flag's `new` mark says what the folder's previous run reported, so a re-run and a first run differ there alone.
  const withoutNews = (v: unknown) => JSON.parse(JSON.stringify(v, (k, x) => (k === 'new' ? undefined : x)));
  const q = (p: string) => { const j = readJson(p); return withoutNews({ totals: j.totals, recordings: j.recordings }); };
  expect(q(join(out, 'quality.json'))).toEqual(q(join(clean, 'quality.json')));
}

describe('damaged stored entries', () => {
  it('a flipped byte in an entry is found by its checksum, reported, recomputed; the tables equal a clean run\'s', async () => {
    const { archive, out, clean, pack } = await reducedTwice();
    const all = await records(pack);
    const victim = all.find((r) => r.facts.recording === 'nightly/2026-11-18/pump-endurance.wav')!;
    expect(all.indexOf(victim)).toBeLessThan(all.length - 1); // sound entries follow it: reading must resume after the damage
    const bytes = readFileSync(pack);
    bytes[victim.offset + victim.length - 100] ^= 0x10; // one bit, inside the deflated results
    writeFileSync(pack, bytes);
    const r = quern('reduce', archive, '--out', out, '--quiet');
    expect(r.code).toBe(1);
    const run = readJson(join(out, 'run.json'));
    expect(run.store.damaged).toEqual([{ file: pack, offset: victim.offset, bytes: victim.length, recording: victim.facts.recording, problem: 'checksum mismatch in the entry\'s results' }]);
    const line = run.recordings.find((x: any) => x.recording === victim.facts.recording);
    expect(line.why).toBe('stored entry damaged (checksum mismatch in the entry\'s results); recomputed');
    expect(line.recomputed.length).toBeGreaterThan(0);
    expect(run.recordings.filter((x: any) => x.recomputed.length > 0).map((x: any) => x.recording)).toEqual([victim.facts.recording]);
    expect(r.stdout).toContain(`DAMAGED stored entry of ${victim.facts.recording}`);
    await expectSameTables(out, clean);
    // The damaged stretch was dropped from the pack: the next run finds nothing wrong and recomputes nothing.
    expect(run.store.compacted).toBe(true);
    quern('reduce', archive, '--out', out, '--quiet');
    const next = readJson(join(out, 'run.json'));
    expect(next.store.damaged).toEqual([]);
    expect(next.counts.recomputed).toBe(0);
  });

  it('two adjacent damaged entries count as two, each named with its recording and recomputed; the tables equal a clean run\'s', async () => {
    const { archive, out, clean, pack } = await reducedTwice();
    const all = await records(pack);
    // Two entries one after the other, with sound entries after them. Their places come from scanPack above; the layout
    // (a 76-byte header, then the facts and the results) is DEVELOPERS.md's, and the test flips one bit in each one's results.
    const i = all.findIndex((x, j) => j + 2 < all.length && [x, all[j + 1]].every((e) => e.facts.status === 'reduced' && e.length > 1000));
    expect(i).toBeGreaterThanOrEqual(0);
    const [a, b] = [all[i], all[i + 1]];
    expect(a.offset + a.length).toBe(b.offset);
    const bytes = readFileSync(pack);
    bytes[a.offset + a.length - 100] ^= 0x10;
    bytes[b.offset + b.length - 100] ^= 0x10;
    writeFileSync(pack, bytes);
    const r = quern('reduce', archive, '--out', out, '--quiet');
    expect(r.code).toBe(1);
    const run = readJson(join(out, 'run.json'));
    const problem = 'checksum mismatch in the entry\'s results';
    expect(run.store.damaged).toEqual([
      { file: pack, offset: a.offset, bytes: a.length, recording: a.facts.recording, problem },
      { file: pack, offset: b.offset, bytes: b.length, recording: b.facts.recording, problem },
    ]);
    for (const v of [a, b]) expect(run.recordings.find((x: any) => x.recording === v.facts.recording).why).toBe(`stored entry damaged (${problem}); recomputed`);
    expect(r.stdout.match(/DAMAGED stored entry of /g)).toHaveLength(2);
    await expectSameTables(out, clean);
  });

  it('an entry cut short (a truncated pack) is reported and recomputed; the tables equal a clean run\'s', async () => {
    const { archive, out, clean, pack } = await reducedTwice();
    const all = await records(pack);
    const last = all[all.length - 1];
    truncateSync(pack, last.offset + Math.floor(last.length / 2));
    const r = quern('reduce', archive, '--out', out, '--quiet');
    expect(r.code).toBe(1);
    const run = readJson(join(out, 'run.json'));
    expect(run.store.damaged).toHaveLength(1);
    expect(run.store.damaged[0]).toMatchObject({ offset: last.offset, recording: last.facts.recording, problem: 'truncated: the file ends inside a record' });
    expect(run.recordings.find((x: any) => x.recording === last.facts.recording).why).toMatch(/^stored entry damaged \(truncated/);
    await expectSameTables(out, clean);
  });

  it('a pack cut between entries (a truncated copy) says where it ends and how many results were lost; their recordings are recomputed, not taken for new ones', async () => {
    const { archive, out, clean, pack } = await reducedTwice();
    const all = await records(pack);
    const size = statSync(pack).size;
    // Cut where the third entry from the end starts: nothing damaged is left to find, three entries are wholly gone.
    const lost = all.slice(-3), at = lost[0].offset;
    truncateSync(pack, at);
    const r = quern('reduce', archive, '--out', out, '--quiet');
    expect(r.code).toBe(1); // the sample archive holds one recording that fails
    const run = readJson(join(out, 'run.json'));
    expect(run.store.damaged).toEqual([]);
    expect(run.store.cut_short).toEqual([{ file: pack, at_byte: at, bytes_lost: size - at, entries_lost: 3 }]);
    for (const e of lost) expect(run.recordings.find((x: any) => x.recording === e.facts.recording).why).toBe(`stored entry lost (${pack} was cut short at byte ${at}); recomputed`);
    expect(run.recordings.filter((x: any) => /^new recording/.test(x.why))).toEqual([]);
    expect(r.stdout).toContain(`CUT SHORT stored results in ${pack}: the pack ends at byte ${at}, ${size - at} bytes short of what the run that wrote it left (a truncated copy?); 3 stored results past it lost, their recordings recomputed`);
    await expectSameTables(out, clean);
    // The run's own mark now holds the pack as it left it: the next run finds nothing cut.
    const next = quern('reduce', archive, '--out', out, '--quiet');
    expect(next.code).toBe(1);
    expect(readJson(join(out, 'run.json')).store.cut_short).toEqual([]);
    expect(readJson(join(out, 'run.json')).counts.recomputed).toBe(0);
  });

  it('a pack cut between entries after an earlier entry was damaged counts as lost only the entries past the cut', async () => {
    const { archive, out, clean, pack } = await reducedTwice();
    const all = await records(pack);
    const size = statSync(pack).size;
    const lost = all.slice(-3), at = lost[0].offset, broken = all[1];
    // The second entry's first byte overwritten (its header no longer starts a record), then the pack cut before the third from the end.
    const bytes = readFileSync(pack);
    bytes[broken.offset] ^= 0xff;
    writeFileSync(pack, bytes.subarray(0, at));
    const r = quern('reduce', archive, '--out', out, '--quiet');
    expect(r.code).toBe(1); // the sample archive holds one recording that fails
    const run = readJson(join(out, 'run.json'));
    expect(run.store.damaged).toEqual([expect.objectContaining({ offset: broken.offset, recording: broken.facts.recording, problem: 'not the start of a record (damaged bytes)' })]);
    expect(run.store.cut_short).toEqual([{ file: pack, at_byte: at, bytes_lost: size - at, entries_lost: 3 }]);
    expect(run.recordings.filter((x: any) => /^stored entry lost/.test(x.why)).map((x: any) => x.recording).sort()).toEqual(lost.map((e) => e.facts.recording).sort());
    expect(r.stdout).toContain('3 stored results past it lost, their recordings recomputed');
    await expectSameTables(out, clean);
  });

  it('a pack cut inside an entry lists that entry as damaged and counts as lost only the entries wholly past it', async () => {
    const { archive, out, clean, pack } = await reducedTwice();
    const all = await records(pack);
    const size = statSync(pack).size;
    const inside = all[all.length - 3], at = inside.offset + Math.floor(inside.length / 2);
    truncateSync(pack, at);
    const r = quern('reduce', archive, '--out', out, '--quiet');
    expect(r.code).toBe(1);
    const run = readJson(join(out, 'run.json'));
    expect(run.store.damaged).toEqual([expect.objectContaining({ offset: inside.offset, recording: inside.facts.recording, problem: 'truncated: the file ends inside a record' })]);
    expect(run.store.cut_short).toEqual([{ file: pack, at_byte: at, bytes_lost: size - at, entries_lost: 2 }]);
    for (const e of all.slice(-2)) expect(run.recordings.find((x: any) => x.recording === e.facts.recording).why).toBe(`stored entry lost (${pack} was cut short at byte ${at}); recomputed`);
    expect(r.stdout).toContain('2 stored results past it lost, their recordings recomputed');
    await expectSameTables(out, clean);
  });

  it('a pack deleted beside its scan mark is told as cut at byte 0, its recordings recomputed as lost results, not new ones', async () => {
    const { archive, out, clean, pack } = await reducedTwice();
    const all = await records(pack);
    const size = statSync(pack).size;
    rmSync(pack);
    const r = quern('reduce', archive, '--out', out, '--quiet');
    expect(r.code).toBe(1); // the sample archive holds one recording that fails
    const run = readJson(join(out, 'run.json'));
    expect(run.store.cut_short).toEqual([{ file: pack, at_byte: 0, bytes_lost: size, entries_lost: all.length, gone: true }]);
    expect(run.recordings.map((x: any) => x.why)).toEqual(run.recordings.map(() => `stored entry lost (${pack} is gone); recomputed`));
    expect(run.recordings.map((x: any) => x.recording).sort()).toEqual(all.map((e) => e.facts.recording).sort());
    expect(r.stdout).toContain(`CUT SHORT stored results in ${pack}: the pack is gone (deleted?), where the run that wrote it left ${size} bytes; ${all.length} stored results in it lost, their recordings recomputed`);
    await expectSameTables(out, clean);
    // Started afresh: the next run finds its own pack and mark, nothing lost.
    expect(quern('reduce', archive, '--out', out, '--quiet').code).toBe(1);
    expect(readJson(join(out, 'run.json')).store.cut_short).toEqual([]);
    expect(readJson(join(out, 'run.json')).counts.recomputed).toBe(0);
  });

  it('garbage in place of the pack is reported, every recording recomputed, and the history reader passes it over', async () => {
    const { archive, out, clean, pack } = await reducedTwice();
    writeFileSync(pack, Buffer.alloc(statSync(pack).size, 0x5a));
    const r = quern('reduce', archive, '--out', out, '--quiet');
    expect(r.code).toBe(1);
    const run = readJson(join(out, 'run.json'));
    expect(run.store.damaged[0]).toMatchObject({ offset: 0, problem: 'not the start of a record (damaged bytes)', recording: null });
    expect(run.counts.recomputed).toBe(11);
    await expectSameTables(out, clean);
    const history: string[] = [];
    for await (const e of storedEntries(out)) history.push(e.recording);
    expect(history).toEqual(run.recordings.map((x: any) => x.recording).sort());
  });
});

describe('a write that fails', () => {
  /** Runs quern under a file-size limit (RLIMIT_FSIZE, in KiB): writing past it fails with EFBIG, as on a full disk. */
  const limited = (kib: number, ...args: string[]) => {
    const r = spawnSync('bash', ['-c', `ulimit -f ${kib}; exec "$0" "$@"`, process.execPath, join(repo, 'dist', 'pipeline', 'cli.js'), ...args], { encoding: 'utf8' });
    return { code: r.status, stdout: r.stdout, stderr: r.stderr };
  };
  const outputs = ['features.parquet', 'windows.parquet', 'cycles.parquet', 'spectra.parquet', 'trends.parquet', 'quality.json', 'quality.html', 'outputs.json'];
  const snapshot = (out: string) => Object.fromEntries(outputs.filter((f) => existsSync(join(out, f))).map((f) => [f, readFileSync(join(out, f))]));

  it('keeps the previous outputs whole when a report cannot be written, names the file and the cause, and exits 2', async () => {
    // Statistics and flags only: small stored entries beside a report of many pictures.
    const { archive, out, clean } = await reducedTwice('statistics: {}\n');
    quern('reduce', archive, '--out', out, '--quiet'); // the first re-run stores fresh files again, confirmed by content
    const before = snapshot(out);
    cpSync(join(archive, 'nightly', '2026-11-16'), join(archive, 'nightly', '2026-11-23'), { recursive: true }); // the outputs must change
    const largest = statSync(join(out, 'quality.html')).size;
    const pack = statSync(join(out, 'cache', 'entries.pack')).size;
    const limit = Math.ceil((pack + 40_000) / 1024); // room for the new recording's entry (its channels are clean: no pictures)
    expect(limit * 1024).toBeLessThan(largest); // the pack may grow; the report or the spectra cannot be written whole
    const r = limited(limit, 'reduce', archive, '--out', out, '--quiet');
    expect(r.code).toBe(2);
    // The report (quality.json's list of recordings, or quality.html) is the largest file: it is named, with the cause.
    expect(r.stderr).toMatch(/cannot write \S+\/out\/quality[\w.-]*: file too large \(a file-size limit was reached\) \(EFBIG\); the previous outputs are kept/);
    expect(snapshot(out)).toEqual(before);
    expect(readdirSync(out, { recursive: true }).filter((f) => String(f).endsWith('.tmp'))).toEqual([]);
    // With room again, the run completes as a clean one would.
    expect(quern('reduce', archive, '--out', out, '--quiet').code).toBe(1);
    quern('reduce', archive, '--out', clean, '--quiet');
    await expectSameTables(out, clean);
  });

  it('stops when a finished recording cannot be stored, names the pack, keeps the outputs, and recovers on the next run', async () => {
    const { archive, out, clean, pack } = await reducedTwice();
    const before = snapshot(out);
    cpSync(join(archive, 'nightly', '2026-11-16'), join(archive, 'nightly', '2026-11-23'), { recursive: true });
    const r = limited(Math.floor(statSync(pack).size / 1024), 'reduce', archive, '--out', out, '--quiet');
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(`cannot write ${pack}: file too large (a file-size limit was reached) (EFBIG)`);
    expect(snapshot(out)).toEqual(before);
    expect(quern('reduce', archive, '--out', out, '--quiet').code).toBe(1);
    quern('reduce', archive, '--out', clean, '--quiet');
    await expectSameTables(out, clean);
  });
});
