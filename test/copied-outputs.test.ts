// An output folder copied or moved elsewhere keeps its records (outputs.json, cache/trends.json) about its own files:
// outputs missing from it are written again, never taken as in place because the original folder still holds them.
// Every run is the built command line on the sample archive; tables are read back with hyparquet, a Parquet reader of
// its own (not the writer quern uses), and compared with the original folder's.
import { cpSync, existsSync, readFileSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { parquetReadObjects } from 'hyparquet';
import { compressors } from 'hyparquet-compressors';
import { beforeAll, describe, expect, it } from 'vitest';
import { keptPath } from '../pipeline/outputs/in-place.js';
import { quern, readJson, sampleArchiveCopy, tempDir } from './helpers.js';

const TABLES = ['features', 'windows', 'cycles', 'trends', 'spectra'];
const TOP = [...TABLES.map((t) => `${t}.parquet`), 'quality.json', 'quality.html', 'run.json', 'outputs.json'];

async function rowsOf(path: string): Promise<unknown[]> {
  const bytes = readFileSync(path);
  const rows = await parquetReadObjects({ file: bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer, compressors });
  return rows.map((r) => JSON.stringify(r, (_k, v) => (typeof v === 'bigint' ? v.toString() : v)));
}

/** The files the terminal's `table:`, `quality:` and `run:` lines name. */
function namedFiles(stdout: string): string[] {
  const table = /^ {2}table: {3}(\S+)\/features\.parquet \(and ([^)]*)\)$/m.exec(stdout);
  expect(table, stdout).not.toBeNull();
  const dir = table![1];
  return [join(dir, 'features.parquet'), ...table![2].split(', ').map((n) => join(dir, n)), join(dir, 'quality.html'), join(dir, 'quality.json'), join(dir, 'run.json')];
}

let archive = '', original = '', originalCode: number | null = null;
beforeAll(() => {
  archive = sampleArchiveCopy();
  original = join(tempDir(), 'out');
  originalCode = quern('reduce', archive, '--out', original, '--jobs', '1', '--quiet').code;
});

/** Runs into `out`, which must write every output again: each named file exists, and each table equals the original's row for row. */
async function expectWrittenAgain(out: string) {
  const r = quern('reduce', archive, '--out', out, '--jobs', '1', '--quiet');
  expect(r.code, r.stderr).toBe(originalCode);
  expect(r.stdout).not.toMatch(/outputs: unchanged/);
  expect(readJson(join(out, 'run.json')).outputs.rewritten).toBe(true);
  for (const f of namedFiles(r.stdout)) expect(existsSync(f), f).toBe(true);
  expect(namedFiles(r.stdout).every((f) => f.startsWith(out))).toBe(true);
  for (const t of TABLES) expect(await rowsOf(join(out, `${t}.parquet`)), t).toEqual(await rowsOf(join(original, `${t}.parquet`)));
  // The folder's records name its files relative to itself.
  expect(Object.keys(readJson(join(out, 'outputs.json')).files).sort()).toEqual(['cycles.parquet', 'features.parquet', 'quality.html', 'quality.json', 'spectra.parquet', 'windows.parquet']);
  expect(Object.keys(readJson(join(out, 'cache', 'trends.json')).files)).toEqual(['trends.parquet']);
  // Run again: now the outputs are in place, and left alone.
  expect(quern('reduce', archive, '--out', out, '--jobs', '1', '--quiet').stdout).toMatch(/outputs: unchanged/);
}

describe('an output folder copied or moved', () => {
  it('copied, three outputs deleted: every output written again, tables equal to the original\'s', async () => {
    const copy = join(tempDir(), 'copy');
    cpSync(original, copy, { recursive: true });
    for (const f of ['features.parquet', 'trends.parquet', 'quality.html']) rmSync(join(copy, f));
    await expectWrittenAgain(copy);
  });

  it('moved, every top-level output deleted and cache/ kept: trends.parquet written again with the rest', async () => {
    const first = join(tempDir(), 'first'), moved = join(tempDir(), 'moved');
    cpSync(original, first, { recursive: true });
    renameSync(first, moved);
    for (const f of TOP) rmSync(join(moved, f), { force: true });
    await expectWrittenAgain(moved);
  });

  it('records kept with absolute names by earlier versions: the original folder\'s files are not in place in a copy', async () => {
    const copy = join(tempDir(), 'old-copy');
    cpSync(original, copy, { recursive: true });
    // As earlier versions kept them: each file by its absolute name in the folder the run wrote (the original).
    for (const record of ['outputs.json', join('cache', 'trends.json')]) {
      const kept = readJson(join(copy, record));
      kept.files = Object.fromEntries(Object.entries(kept.files).map(([name, size]) => [join(original, name), size]));
      writeFileSync(join(copy, record), JSON.stringify(kept));
    }
    for (const f of ['features.parquet', 'trends.parquet', 'quality.html']) rmSync(join(copy, f));
    await expectWrittenAgain(copy);
  });

  it('records kept with absolute names inside the folder itself still vouch for its outputs', () => {
    const own = join(tempDir(), 'own');
    cpSync(original, own, { recursive: true });
    for (const record of ['outputs.json', join('cache', 'trends.json')]) {
      const kept = readJson(join(own, record));
      kept.files = Object.fromEntries(Object.entries(kept.files).map(([name, size]) => [join(own, name), size]));
      writeFileSync(join(own, record), JSON.stringify(kept));
    }
    const r = quern('reduce', archive, '--out', own, '--jobs', '1', '--quiet');
    expect(r.stdout).toMatch(/outputs: unchanged/);
  });
});

describe('a name an output folder keeps', () => {
  it('lies in the folder, or counts as not in place', () => {
    expect(keptPath('/data/out', 'features.parquet')).toBe('/data/out/features.parquet');
    expect(keptPath('/data/out', 'parts/features-1-of-2.parquet')).toBe('/data/out/parts/features-1-of-2.parquet');
    expect(keptPath('/data/out', '/data/out/features.parquet')).toBe('/data/out/features.parquet');
    expect(keptPath('/data/out', '/data/original/features.parquet')).toBeNull();
    expect(keptPath('/data/out', '/data/out-old/features.parquet')).toBeNull();
    expect(keptPath('/data/out', '../original/features.parquet')).toBeNull();
    expect(keptPath('/data/out', 'parts/../../x.parquet')).toBeNull();
    expect(keptPath('/data/out', '')).toBeNull();
  });
});
