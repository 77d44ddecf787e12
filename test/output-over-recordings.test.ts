// Where the outputs go must never change what is read: an output folder placed over recordings would hide them from the
// scan (which skips the output folder), so the run refuses it instead of reducing nothing and calling that a success.
import { spawn } from 'node:child_process';
import { copyFileSync, existsSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { CSV_FILES, XLSX_FILE } from '../pipeline/exports/export.js';
import { OWN_OUTPUT_NAMES } from '../pipeline/outputs/own-outputs.js';
import { quern, readJson, repo, sampleArchiveCopy } from './helpers.js';

describe('an output folder inside the archive', () => {
  it('refuses one that holds recordings a group matches, naming one, and writes nothing', () => {
    const archive = sampleArchiveCopy(), out = join(archive, 'nightly');
    const r = quern('reduce', archive, '--out', out, '--quiet');
    expect(r.code, r.stdout + r.stderr).toBe(2);
    expect(r.stderr).toMatch(/the output folder .*nightly holds recordings of the archive \(nightly\/2026-11-16\/pump-endurance\.wav/);
    expect(r.stderr).toMatch(/give an output folder \(--out\) outside the recordings/);
    expect(existsSync(join(out, 'features.parquet'))).toBe(false);
  });

  it('accepts one of its own, beside the recordings, and leaves it out of the scan', () => {
    const archive = sampleArchiveCopy(), out = join(archive, 'reduced');
    expect(quern('reduce', archive, '--out', out, '--quiet').code).toBe(1); // the sample archive's truncated recording
    expect(quern('reduce', archive, '--out', out, '--quiet').code).toBe(1);
    const run = readJson(join(out, 'run.json'));
    expect(run.counts.scanned ?? run.recordings.length).toBe(11);
    expect(run.unmatched.map((u: any) => u.path)).toEqual(['nightly/2026-11-19/pump-endurance-retake.wav']); // planted in the sample archive
  });

  it('never takes its own exports for recordings, in the next run or in quern check, where a group matches every CSV', () => {
    const archive = sampleArchiveCopy(), out = join(archive, 'reduced');
    const yaml = join(archive, 'archive.yaml');
    writeFileSync(yaml, readFileSync(yaml, 'utf8').replace('match: "handheld/*.csv"', 'match: "**/*.csv"'));
    const csvs = readdirSync(join(archive, 'handheld')).filter((f) => f.endsWith('.csv')).map((f) => `handheld/${f}`);
    expect(quern('reduce', archive, '--out', out, '--quiet', '--export', 'csv').code).toBe(1);
    expect(readdirSync(out).filter((f) => f.endsWith('.csv')).length).toBeGreaterThan(3);
    const night2 = quern('reduce', archive, '--out', out, '--quiet', '--export', 'csv');
    expect(night2.code, night2.stderr).toBe(1);
    const run = readJson(join(out, 'run.json'));
    expect(run.recordings.map((r: any) => r.recording).filter((r: string) => r.endsWith('.csv'))).toEqual(csvs);
    // quern check is not told the output folder: it knows one of quern's by its stored results beside its run record.
    const checked = quern('check', archive);
    expect(checked.stdout).not.toMatch(/reduced\//);
    expect(checked.stdout).toMatch(new RegExp(`^ok +${csvs[0]}`, 'm'));
    // A recording put into the output folder is still one, and still refused.
    copyFileSync(join(archive, csvs[0]), join(out, 'spot-check.csv'));
    const refused = quern('reduce', archive, '--out', out, '--quiet');
    expect(refused.code).toBe(2);
    expect(refused.stderr).toMatch(/holds recordings of the archive \(reduced\/spot-check\.csv\)/);
    expect(quern('check', archive).stdout).toMatch(/^ok +reduced\/spot-check\.csv/m);
  });

  it('knows every file a run, a merge or an export writes at the top of an output folder as its own', () => {
    for (const f of [...Object.values(CSV_FILES), XLSX_FILE, 'features.parquet', 'windows.parquet', 'cycles.parquet', 'trends.parquet', 'spectra.parquet', 'quality.json', 'quality.html', 'run.json', 'outputs.json', 'run.lock', 'cache', 'parts']) {
      expect(OWN_OUTPUT_NAMES.has(f), f).toBe(true);
    }
  });
});

describe('a terminal that goes away', () => {
  /** Runs the built command with its standard output (or both outputs) closed at once, as `quern … | head -1` does. */
  function closedPipe(args: string[], both = false): Promise<{ code: number | null; stderr: string }> {
    const child = spawn(process.execPath, [join(repo, 'dist', 'pipeline', 'cli.js'), ...args], { stdio: ['ignore', 'pipe', 'pipe'] });
    child.stdout.destroy();
    let stderr = '';
    if (both) child.stderr.destroy(); else child.stderr.on('data', (d) => { stderr += d; });
    return new Promise((done) => child.on('close', (code) => done({ code, stderr })));
  }

  it('the run still completes with its own exit code and no stack trace when its reader quits early', async () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    const r = await closedPipe(['reduce', archive, '--out', out, '--log', 'plain']);
    expect(r.stderr).not.toMatch(/EPIPE|Unhandled/);
    expect(r.code).toBe(1); // the sample archive's truncated recording, as with an open terminal
    expect(readJson(join(out, 'run.json')).counts.reduced).toBe(10);
    const both = await closedPipe(['reduce', archive, '--out', out, '--log', 'plain', '--force'], true);
    expect(both.code).toBe(1);
  });
});

describe('exporting a damaged table', () => {
  it('names the file and what to do, exits 2, and a re-run of reduce mends it', () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    expect(quern('reduce', archive, '--out', out, '--quiet').code).toBe(1);
    const table = join(out, 'features.parquet');
    writeFileSync(table, readFileSync(table).subarray(0, 500)); // a copy cut short
    const r = quern('export', out, '--to', 'csv');
    expect(r.code, r.stdout + r.stderr).toBe(2);
    expect(r.stderr).toContain(`${table}: not a readable Parquet table (`);
    expect(r.stderr).toMatch(/run quern reduce again to write it afresh/);
    expect(r.stderr).not.toMatch(/unexpected error|    at /);
    expect(quern('reduce', archive, '--out', out, '--quiet').code).toBe(1);
    expect(quern('export', out, '--to', 'csv').code).toBe(0);
  });
});
