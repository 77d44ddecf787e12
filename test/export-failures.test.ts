// Exports that cannot be written (a full disk, a folder in the way): all of the export or none of it, the file and the
// cause named, exit code 2; after reduce --export, the message says the run's own outputs are in place.
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readdirSync, readFileSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { quern, readJson, repo, sampleArchiveCopy } from './helpers.js';

const EXPORTS = ['features.csv', 'windows.csv', 'cycles.csv', 'trends.csv', 'spectra.csv', 'quality-flags.csv', 'tables.xlsx'];
const snapshot = (out: string) => Object.fromEntries(EXPORTS.filter((f) => existsSync(join(out, f)) && statSync(join(out, f)).isFile()).map((f) => [f, readFileSync(join(out, f))]));
const temporaries = (out: string) => readdirSync(out).filter((f) => f.endsWith('.tmp'));

/** Runs quern under a file-size limit (RLIMIT_FSIZE, in KiB): a write past it fails with EFBIG, as one on a full disk fails. */
function limited(kib: number, ...args: string[]) {
  const r = spawnSync('bash', ['-c', `ulimit -f ${kib}; exec "$0" "$@"`, process.execPath, join(repo, 'dist', 'pipeline', 'cli.js'), ...args], { encoding: 'utf8' });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

describe('an export that cannot be written', () => {
  it('leaves the previous export whole when a file cannot be written in full, naming the file and the cause', () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    expect(quern('reduce', archive, '--out', out, '--quiet', '--export', 'csv').code).toBe(1);
    const before = snapshot(out);
    // Room for the small tables, not for the spectra: the export would stop part-way through its files.
    const spectra = statSync(join(out, 'spectra.csv')).size;
    const r = limited(Math.floor(spectra / 1024 / 2), 'export', out, '--to', 'csv,xlsx', '--digits', '6');
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(new RegExp(`^quern: cannot write ${out}/\\S+: file too large \\(a file-size limit was reached\\) \\(EFBIG\\); no file of this export was put in place \\(the previous export, if any, is kept as it was\\)\\. Free space or raise the limit, then run quern export ${out} --to csv,xlsx\\n$`));
    expect(r.stderr).not.toMatch(/unexpected error|\n\s+at /);
    expect(snapshot(out)).toEqual(before); // not one file of the new export (rounded to 6 digits) in place, no workbook
    expect(temporaries(out)).toEqual([]);
    expect(existsSync(join(out, 'tables.xlsx'))).toBe(false);
  });

  it('puts no file in place when a folder stands where its last file must go', () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    expect(quern('reduce', archive, '--out', out, '--quiet', '--export', 'csv').code).toBe(1);
    const before = snapshot(out);
    mkdirSync(join(out, 'tables.xlsx'));
    const r = quern('export', out, '--to', 'csv,xlsx', '--digits', '6');
    expect(r.code).toBe(2);
    expect(r.stderr).toBe(`quern: cannot write ${out}/tables.xlsx: a folder stands where the file must go (EISDIR); no file of this export was put in place (the previous export, if any, is kept as it was). Move that folder away, then run quern export ${out} --to csv,xlsx\n`);
    expect(snapshot(out)).toEqual(before);
    expect(temporaries(out)).toEqual([]);
  });

  it('after reduce --export, says that the reduction\'s outputs are in place and only the export failed, exit code 2', () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    mkdirSync(out);
    mkdirSync(join(out, 'features.csv'));
    const r = quern('reduce', archive, '--out', out, '--quiet', '--export', 'csv');
    expect(r.code).toBe(2);
    expect(r.stdout).toMatch(/^quern \S+: \d+ of \d+ recordings reduced/);
    expect(r.stderr).toBe(`quern: the run's outputs are written and in place in ${out}; only the export failed: cannot write ${out}/features.csv: a folder stands where the file must go (EISDIR); no file of this export was put in place (the previous export, if any, is kept as it was). Move that folder away, then run quern export ${out} --to csv\n`);
    const run = readJson(join(out, 'run.json'));
    expect(run.counts.reduced).toBeGreaterThan(0);
    expect(existsSync(join(out, 'features.parquet')) && existsSync(join(out, 'outputs.json'))).toBe(true);
    expect(readdirSync(out).filter((f) => f.endsWith('.csv') && f !== 'features.csv')).toEqual([]);
    // The folder moved away, the export alone completes.
    spawnSync('rmdir', [join(out, 'features.csv')]);
    const again = quern('export', out, '--to', 'csv');
    expect(again.code).toBe(0);
    expect(again.stdout.split('\n').filter(Boolean).map((f) => f.slice(out.length + 1))).toEqual(['features.csv', 'windows.csv', 'cycles.csv', 'trends.csv', 'spectra.csv', 'quality-flags.csv']);
  });
});
