// A run that meets an error nothing waits for (thrown in a callback, a rejection no one handles) ends as a signal ends
// it: its temporaries and lock removed, a line saying where the outputs stand, exit code 2 with the stack. Every run is a
// process of its own on real files.
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, openSync, closeSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { DuckDBInstance } from '@duckdb/node-api';
import { describe, expect, it } from 'vitest';
import { encodeWav } from '../scripts/wav-file.js';
import { quern, readJson, repo, tempDir } from './helpers.js';

const cli = join(repo, 'dist', 'pipeline', 'cli.js');
const built = (path: string) => pathToFileURL(join(repo, 'dist', 'pipeline', path)).href;

// Invented: a rig of short two-channel captures.
const RECORDINGS = 24, FS = 8000, FRAMES = 4000;
const declaration = (rig: string) => `groups:\n  - name: rig\n    match: "*.wav"\n    labels: { rig: ${rig} }\n    channels:\n      - { name: acc_x, quantity: acceleration, unit: m/s^2, scale: 50 }\n      - { name: acc_y, quantity: acceleration, unit: m/s^2, scale: 50 }\n`;
function captures(): string {
  const archive = join(tempDir(), 'archive');
  mkdirSync(archive);
  for (let r = 0; r < RECORDINGS; r++) {
    const channels = [0, 1].map((c) => Float64Array.from({ length: FRAMES }, (_, i) => 0.3 * Math.sin((2 * Math.PI * (50 + 7 * r + 13 * c) * i) / FS)));
    writeFileSync(join(archive, `night-${String(r).padStart(3, '0')}.wav`), encodeWav({ sampleRate: FS, channels, encoding: 'pcm16' }));
  }
  writeFileSync(join(archive, 'archive.yaml'), declaration('A'));
  return archive;
}

const temporaries = (out: string) => readdirSync(out, { recursive: true }).map(String).filter((f) => f.endsWith('.tmp'));

describe('a run whose log cannot be written', () => {
  // /dev/full answers every write with ENOSPC (Linux null(4)): a log on a full disk (`2>>night.log`). The log is not the
  // product: the run writes its tables and report as a run with a working log does, names the failure once on standard
  // output, and ends with exit code 2 (README: a run whose log is incomplete, as one whose closing lines could not be written).
  const tableRows = async (out: string) => {
    const db = await (await DuckDBInstance.create()).connect();
    return (await db.runAndReadAll(`select * exclude (quern_run_id) from '${join(out, 'features.parquet')}' order by recording, channel`).catch(() => db.runAndReadAll(`select * from '${join(out, 'features.parquet')}' order by recording, channel`))).getRowObjectsJson();
  };
  const toFull = (archive: string, out: string, ...more: string[]) => {
    const full = openSync('/dev/full', 'w');
    try { return spawnSync(process.execPath, [cli, 'reduce', archive, '--out', out, '--jobs', '1', ...more], { stdio: ['ignore', 'pipe', full], encoding: 'utf8' }); } finally { closeSync(full); }
  };
  for (const log of ['plain', 'json']) {
    it(`--log ${log}: writes the tables a run with a working log writes, names the failure once on standard output, exits 2, lock released`, async () => {
      const archive = captures(), out = join(archive, '..', 'out'), reference = join(archive, '..', 'reference');
      const clean = quern('reduce', archive, '--out', reference, '--jobs', '1', '--log', log);
      expect(clean.code, clean.stderr).toBe(0);
      const r = toFull(archive, out, '--log', log);
      expect(r.status, r.stdout).toBe(2);
      const named = r.stdout.split('\n').filter((l) => l.includes('log (standard error'));
      expect(named).toEqual(["quern: the run's log (standard error, /dev/full) could not be written: ENOSPC: no space left on device, write; its lines from then on are missing, and the run went on without them: the new outputs, run.json and outputs.json were written by this run and are in place; exit code 2 rather than the run's own 0, since its log is incomplete"]);
      expect(r.stdout).toMatch(/^quern \S+: 24 of 24 recordings reduced/);
      expect(await tableRows(out)).toEqual(await tableRows(reference));
      const run = readJson(join(out, 'run.json'));
      expect(run.counts).toEqual(readJson(join(reference, 'run.json')).counts);
      expect(readJson(join(out, 'outputs.json')).run_id).toBe(run.run_id);
      expect(readJson(join(out, 'quality.json')).run_id).toBe(run.run_id);
      expect(existsSync(join(out, 'quality.html'))).toBe(true);
      expect(existsSync(join(out, 'run.lock'))).toBe(false);
      expect(temporaries(out)).toEqual([]);
      const again = quern('reduce', archive, '--out', out, '--quiet', '--jobs', '1');
      expect(again.code, again.stderr).toBe(0);
      expect(again.stdout).not.toMatch(/took over|TOOK OVER/i);
      expect(readJson(join(out, 'run.json')).lock.took_over).toBeNull();
    });
  }

  it('--quiet writes nothing to the log, so nothing is lost: exit code 0 and no line about it', () => {
    const archive = captures(), out = join(archive, '..', 'out');
    const r = toFull(archive, out, '--quiet');
    expect(r.status, r.stdout).toBe(0);
    expect(r.stdout).not.toContain('log (standard error');
  });

  it('a run that fails for its own reason says why on standard output, since its log cannot take it', () => {
    const archive = captures(), out = join(archive, '..', 'out');
    const r = toFull(archive, out, '--log', 'plain', '--spec', join(archive, 'missing.yaml'));
    expect(r.status).toBe(2);
    expect(r.stdout).toMatch(/missing\.yaml/);
  });
});

describe('a run whose closing lines cannot be written', () => {
  // Standard output on /dev/full (ENOSPC to every write, Linux null(4)): the run completes, then its summary fails.
  it('says the run completed and where its outputs stand, exits 2 with the run\'s own code named, lock released', () => {
    const archive = captures(), out = join(archive, '..', 'out');
    expect(quern('reduce', archive, '--out', out, '--quiet', '--jobs', '1').code).toBe(0);
    writeFileSync(join(archive, 'archive.yaml'), declaration('B')); // every output to be written again
    const before = readJson(join(out, 'outputs.json')).run_id;
    const toFull = () => {
      const full = openSync('/dev/full', 'w');
      try { return spawnSync(process.execPath, [cli, 'reduce', archive, '--out', out, '--jobs', '1', '--quiet'], { stdio: ['ignore', full, 'pipe'], encoding: 'utf8' }); } finally { closeSync(full); }
    };
    const r = toFull();
    expect(r.status, r.stderr).toBe(2);
    expect(r.stderr).toBe(`quern: the run completed and the new outputs, run.json and outputs.json were written by this run and are in place, but its closing lines could not be written (ENOSPC: no space left on device, write); run.json holds the run's record. Exit code 2 rather than the run's own 0, since its log is incomplete; the outputs need no second run\n`);
    // What the line says is what happened: this run's record, its digest file and its tables.
    const run = readJson(join(out, 'run.json'));
    expect(run.outputs.rewritten).toBe(true);
    expect(readJson(join(out, 'outputs.json')).run_id).toBe(run.run_id);
    expect(run.run_id).not.toBe(before);
    expect(readJson(join(out, 'quality.json')).run_id).toBe(run.run_id);
    expect(existsSync(join(out, 'run.lock'))).toBe(false);
    expect(temporaries(out)).toEqual([]);
    // Again, nothing changed: the outputs are left as they were, and the line says so.
    const again = toFull();
    expect(again.status).toBe(2);
    expect(again.stderr).toMatch(/^quern: the run completed and the outputs, unchanged, are in place, with this run's run.json, but its closing lines could not be written \(ENOSPC/);
    expect(readJson(join(out, 'run.json')).outputs.rewritten).toBe(false);
  });
});

/**
 * A process that holds a run's lock and a staged output, with the run's stop set as `openRun` sets it, and then throws
 * from a timer (`throw`) or leaves a promise rejected (`reject`): the ways an error escapes every caller.
 */
function crashWhileHolding(out: string, how: 'throw' | 'reject', stand: 'previous' | 'replacing' | 'written' | 'unchanged') {
  const script = `
    import { takeLock, lockPath } from ${JSON.stringify(built('outputs/lock.js'))};
    import { StagedFile } from ${JSON.stringify(built('outputs/staged.js'))};
    import { removeOwnTemporaries } from ${JSON.stringify(built('outputs/sweep-leftovers.js'))};
    import { stopOnSignal } from ${JSON.stringify(built('stop-on-signal.js'))};
    const out = ${JSON.stringify(out)};
    const lock = await takeLock(lockPath(out, null), { run_id: 'r1', command: 'quern reduce' });
    const stop = stopOnSignal(() => { removeOwnTemporaries(out, null); lock.release(); }, (m, code, d) => process.stderr.write('quern: ' + m + '\\n' + (d?.stack ? d.stack + '\\n' : '')));
    const staged = new StagedFile(out + '/features.parquet');
    await staged.write('half a table');
    await staged.close();
    stop.now(${JSON.stringify(stand)});
    ${how === 'throw' ? "setTimeout(() => { throw new Error('thrown where no caller waits'); }, 10);" : "Promise.reject(new Error('rejected where no caller waits'));"}
    setTimeout(() => {}, 5000);
  `;
  return spawnSync(process.execPath, ['--input-type=module', '-e', script], { encoding: 'utf8' });
}

describe('an error no caller waits for, while a run holds its lock', () => {
  for (const how of ['throw', 'reject'] as const) {
    it(`${how}: one line on where the outputs stand, the stack, exit code 2, temporaries and lock removed`, () => {
      const out = tempDir();
      writeFileSync(join(out, 'features.parquet'), 'the previous table');
      const r = crashWhileHolding(out, how, 'previous');
      expect(r.status, r.stderr).toBe(2);
      const lines = r.stderr.split('\n');
      expect(lines[0]).toBe('quern: stopped by an unexpected error; the outputs are as they were before the run, and the results stored so far are kept for the next run; its temporary files and lock are removed. Please report it with what follows:');
      expect(lines[1]).toBe(`Error: ${how === 'throw' ? 'thrown' : 'rejected'} where no caller waits`);
      expect(lines[2]).toMatch(/^ {4}at /); // the stack follows
      expect(existsSync(join(out, 'run.lock'))).toBe(false);
      expect(temporaries(out)).toEqual([]);
      expect(readFileSync(join(out, 'features.parquet'), 'utf8')).toBe('the previous table');
    });
  }
  it('while the outputs are put in place: says outputs.json is absent until the next run', () => {
    const out = tempDir();
    const r = crashWhileHolding(out, 'throw', 'replacing');
    expect(r.status, r.stderr).toBe(2);
    expect(r.stderr.split('\n')[0]).toBe('quern: stopped by an unexpected error while the new outputs were put in place; outputs.json is absent until the next run writes them again, and the results stored so far are kept for the next run; its temporary files and lock are removed. Please report it with what follows:');
    expect(existsSync(join(out, 'run.lock'))).toBe(false);
  });
  it('after the outputs were written, or found unchanged beside this run\'s record: says so', () => {
    const written = crashWhileHolding(tempDir(), 'throw', 'written');
    expect(written.status, written.stderr).toBe(2);
    expect(written.stderr.split('\n')[0]).toBe('quern: stopped by an unexpected error after the new outputs were written; the results stored so far are kept for the next run; its temporary files and lock are removed. Please report it with what follows:');
    const unchanged = crashWhileHolding(tempDir(), 'throw', 'unchanged');
    expect(unchanged.stderr.split('\n')[0]).toBe('quern: stopped by an unexpected error after the run\'s record was written; the outputs, unchanged, are in place, and the results stored so far are kept for the next run; its temporary files and lock are removed. Please report it with what follows:');
  });
});
