// How a run ends when something goes wrong, for a lab that runs quern unattended: a write that fails while the workers
// still assemble the tables, a scheduler's SIGTERM, a SIGKILL between the outputs and run.json, and what --log json says.
// Every run is the built command line in a process of its own.
import { spawn, spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readdirSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { encodeWav } from '../scripts/wav-file.js';
import { quern, readJson, repo, tempDir } from './helpers.js';

const cli = join(repo, 'dist', 'pipeline', 'cli.js');
const sleep = (ms: number) => new Promise((resolve) => setTimeout(resolve, ms));

// Invented: a rig of many short two-channel captures, so that the tables are assembled in many slices, several in flight.
const RECORDINGS = 120, FS = 8000, FRAMES = 4000;
function manyCaptures(): string {
  const archive = join(tempDir(), 'archive');
  mkdirSync(archive);
  for (let r = 0; r < RECORDINGS; r++) {
    const channels = [0, 1].map((c) => Float64Array.from({ length: FRAMES }, (_, i) => 0.3 * Math.sin((2 * Math.PI * (50 + 7 * r + 13 * c) * i) / FS) + 0.01 * Math.sin(i * (r + 1))));
    writeFileSync(join(archive, `night-${String(r).padStart(3, '0')}.wav`), encodeWav({ sampleRate: FS, channels, encoding: 'pcm16' }));
  }
  writeFileSync(join(archive, 'archive.yaml'), declaration('A'));
  return archive;
}
const declaration = (rig: string) => `groups:\n  - name: rig\n    match: "*.wav"\n    labels: { rig: ${rig} }\n    channels:\n      - { name: acc_x, quantity: acceleration, unit: m/s^2, scale: 50 }\n      - { name: acc_y, quantity: acceleration, unit: m/s^2, scale: 50 }\n`;

/** Every file of the folder (and of cache/) with its bytes: the outputs and the trends' kept state as a later run finds them. */
function snapshot(out: string): Record<string, Buffer> {
  const files: Record<string, Buffer> = {};
  for (const dir of ['.', 'cache']) for (const name of readdirSync(join(out, dir))) {
    const path = join(out, dir, name);
    if (statSync(path).isFile() && name !== 'entries.pack' && name !== 'entries.pack.scanned') files[join(dir, name)] = readFileSync(path);
  }
  return files;
}
const temporaries = (out: string) => readdirSync(out, { recursive: true }).map(String).filter((f) => f.endsWith('.tmp'));

/** The command under a file-size limit (RLIMIT_FSIZE, KiB): a write past it fails with EFBIG (POSIX setrlimit), as a full disk fails with ENOSPC. */
function underSizeLimit(kib: number, ...args: string[]) {
  const r = spawnSync('bash', ['-c', `ulimit -f ${kib}; exec "$0" "$@"`, process.execPath, cli, ...args], { encoding: 'utf8' });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

/** An archive reduced once, then declared anew (a label changed): the next run rewrites every output and stores nothing. */
function reducedThenRelabelled() {
  const archive = manyCaptures(), out = join(archive, '..', 'out');
  expect(quern('reduce', archive, '--out', out, '--quiet', '--jobs', '2').code).toBe(0);
  // Files written just before the first run are confirmed by content and stored again by the next: done here, so that
  // the run under test appends nothing to the pack.
  expect(quern('reduce', archive, '--out', out, '--quiet', '--jobs', '2').code).toBe(0);
  writeFileSync(join(archive, 'archive.yaml'), declaration('B'));
  return { archive, out };
}

// Each test reduces 120 recordings twice before the run under test: generous time for a machine shared with other work.
describe('a write that fails while the workers still assemble the tables', { timeout: 360_000 }, () => {
  it('names the file and the cause, exits 2, releases the lock and leaves the outputs and the trends\' kept state as they were', () => {
    const { archive, out } = reducedThenRelabelled();
    const before = snapshot(out);
    expect(Object.keys(before)).toContain(join('cache', 'trends.json'));
    // 64 KiB: the first table or report spool to pass it fails while slices of the 120 recordings are still in the workers.
    const r = underSizeLimit(64, 'reduce', archive, '--out', out, '--jobs', '2', '--log', 'json');
    expect(r.code, r.stderr).toBe(2);
    // --log json: every line of standard error is a JSON value (ECMA-404), the last an error event with the exit code.
    const events = r.stderr.trim().split('\n').map((l) => JSON.parse(l));
    const last = events.at(-1);
    expect(last).toMatchObject({ event: 'error', exit_code: 2 });
    expect(last.message).toMatch(new RegExp(`^cannot write ${out}/\\.?[\\w.-]+: file too large \\(a file-size limit was reached\\) \\(EFBIG\\); the previous outputs are kept`));
    expect(r.stderr).not.toMatch(/unexpected error|Terminating worker thread/);
    expect(existsSync(join(out, 'run.lock'))).toBe(false);
    expect(temporaries(out)).toEqual([]);
    expect(snapshot(out)).toEqual(before);
    // With room again the run completes, reusing every stored result.
    const again = quern('reduce', archive, '--out', out, '--quiet');
    expect(again.code, again.stderr).toBe(0);
    expect(readJson(join(out, 'run.json')).counts).toMatchObject({ reused: RECORDINGS, recomputed: 0 });
  });
});

/** The exit status a POSIX shell reports for a process ended by `signal` (bash: 128 + its number), asked of bash itself. */
function shellStatusFor(signal: NodeJS.Signals): number {
  return Number(spawnSync('bash', ['-c', `bash -c 'kill -${signal.slice(3)} $$'; echo $?`], { encoding: 'utf8' }).stdout.trim());
}

/** Runs the command and sends `signal` once it has begun writing its tables (a staged features.parquet appears). */
async function signalledWhileWriting(archive: string, out: string, signal: NodeJS.Signals) {
  const run = spawn(process.execPath, [cli, 'reduce', archive, '--out', out, '--jobs', '2', '--log', 'plain'], { stdio: ['ignore', 'pipe', 'pipe'] });
  let stderr = '', stdout = '';
  run.stderr.on('data', (d) => { stderr += d; });
  run.stdout.on('data', (d) => { stdout += d; });
  const ended = new Promise<number | null>((resolve) => run.on('exit', (code) => resolve(code)));
  let sent = false;
  for (let waited = 0; waited < 60_000 && run.exitCode == null; waited += 2) {
    if (readdirSync(out).some((n) => n.startsWith('.features.parquet.'))) { sent = run.kill(signal); break; }
    await sleep(2);
  }
  return { code: await ended, sent, stderr, stdout };
}

describe('a run stopped by a signal', { timeout: 360_000 }, () => {
  for (const signal of ['SIGTERM', 'SIGINT'] as const) {
    it(`${signal}: says so in one line, removes its temporaries, releases the lock, exits as a shell expects, and the next run reuses what was stored`, async () => {
      const { archive, out } = reducedThenRelabelled();
      const before = snapshot(out);
      let r = { code: null as number | null, sent: false, stderr: '', stdout: '' };
      // The write phase lasts about a second; should the run slip past the watch, it is tried again from the same state.
      for (let attempt = 0; attempt < 3 && !r.sent; attempt++) r = await signalledWhileWriting(archive, out, signal);
      expect(r.sent).toBe(true);
      expect(r.code, r.stderr).toBe(shellStatusFor(signal)); // 143 for SIGTERM, 130 for SIGINT
      expect(r.stderr.trim().split('\n').at(-1)).toBe(`quern: stopped by ${signal}; the outputs are as they were before the run, and the results stored so far are kept for the next run`);
      expect(r.stdout).toBe('');
      expect(existsSync(join(out, 'run.lock'))).toBe(false);
      expect(temporaries(out)).toEqual([]);
      expect(snapshot(out)).toEqual(before);
      const again = quern('reduce', archive, '--out', out, '--quiet');
      expect(again.code, again.stderr).toBe(0);
      const run = readJson(join(out, 'run.json'));
      expect(run.counts).toMatchObject({ reused: RECORDINGS, recomputed: 0 });
      expect(run.lock).toEqual({ took_over: null, leftovers_removed: [] }); // nothing left for it to sweep
    });
  }
});

describe('outputs.json and run.json', () => {
  it('a run killed once outputs.json is back leaves it beside its own run.json', async () => {
    const { archive, out } = reducedThenRelabelled();
    const previous = readJson(join(out, 'run.json')).run_id;
    let seen = false;
    for (let attempt = 0; attempt < 3 && !seen; attempt++) {
      const run = spawn(process.execPath, [cli, 'reduce', archive, '--out', out, '--quiet', '--jobs', '2'], { stdio: 'ignore' });
      const ended = new Promise((resolve) => run.on('exit', resolve));
      // outputs.json goes just before the outputs are put in place; the kill lands as soon as it is back.
      let gone = false;
      for (let waited = 0; waited < 60_000 && run.exitCode == null; waited += 1) {
        const present = existsSync(join(out, 'outputs.json'));
        if (!present) gone = true;
        else if (gone) { run.kill('SIGKILL'); seen = true; break; }
        await sleep(1);
      }
      await ended;
    }
    expect(seen).toBe(true);
    const digest = readJson(join(out, 'outputs.json')), record = readJson(join(out, 'run.json'));
    expect(digest.run_id).not.toBe(previous);
    expect(record.run_id).toBe(digest.run_id);
    expect(record.outputs.written_by_run).toBe(digest.run_id);
    // The folder is one run's: export takes it.
    const exported = quern('export', out, '--to', 'csv');
    expect(exported.code, exported.stderr).toBe(0);
  });

  it('quern export refuses a folder whose tables come from another run than its run.json, naming the files and both runs', () => {
    const { archive, out } = reducedThenRelabelled();
    const oldRecord = readFileSync(join(out, 'run.json'));
    // A run that found the outputs unchanged names the run that wrote them.
    const oldId = JSON.parse(oldRecord.toString()).outputs.written_by_run;
    expect(quern('reduce', archive, '--out', out, '--quiet').code).toBe(0);
    const newId = readJson(join(out, 'run.json')).run_id;
    // What a run stopped between its tables and its record leaves: the new tables beside the previous run.json.
    writeFileSync(join(out, 'run.json'), oldRecord);
    const r = quern('export', out, '--to', 'csv,xlsx');
    expect(r.code).toBe(2);
    expect(r.stderr).toBe(`quern: ${out}: the outputs are not one run's: run.json describes outputs written by run ${oldId}, but features.parquet, windows.parquet, cycles.parquet, spectra.parquet, quality.json, outputs.json by run ${newId}. A run was stopped while putting its outputs in place; run quern reduce (or quern merge) into the folder again, then export\n`);
    expect(readdirSync(out).filter((n) => n.endsWith('.csv') || n.endsWith('.xlsx'))).toEqual([]);
  });
});

describe('--log json', () => {
  it('a run that cannot be done says why as an error event with its exit code', () => {
    const archive = join(tempDir(), 'archive');
    mkdirSync(archive); // no archive.yaml
    const r = quern('reduce', archive, '--out', join(archive, '..', 'out'), '--log', 'json');
    expect(r.code).toBe(2);
    const lines = r.stderr.trim().split('\n');
    expect(lines).toHaveLength(1);
    const event = JSON.parse(lines[0]);
    expect(event).toMatchObject({ event: 'error', exit_code: 2 });
    expect(event.message).toContain('archive.yaml');
    expect(Date.parse(event.time)).not.toBeNaN();
  });

  it('the summary carries the lock taken over, the damaged stored entries and the exit code, as run.json names them', () => {
    const { archive, out } = reducedThenRelabelled();
    // A lock left by a run that is gone: a pid that no longer runs on this host.
    const gone = spawnSync(process.execPath, ['-e', 'console.log(process.pid)'], { encoding: 'utf8' }).stdout.trim();
    writeFileSync(join(out, 'run.lock'), JSON.stringify({ host: spawnSync('hostname', { encoding: 'utf8' }).stdout.trim(), pid: Number(gone), started: '2026-11-30T01:00:00.000Z', run_id: 'r-gone', command: 'quern reduce' }));
    // One flipped bit near the pack's end: the last entry's results no longer match their checksum.
    const pack = join(out, 'cache', 'entries.pack');
    const bytes = readFileSync(pack);
    bytes[bytes.length - 200] ^= 0x10;
    writeFileSync(pack, bytes);
    const r = quern('reduce', archive, '--out', out, '--log', 'json');
    expect(r.code, r.stderr).toBe(0);
    const summary = r.stderr.trim().split('\n').map((l) => JSON.parse(l)).find((e) => e.event === 'summary');
    const record = readJson(join(out, 'run.json'));
    expect(record.lock.took_over).not.toBeNull();
    expect(record.store.damaged).toHaveLength(1);
    expect(summary.lock).toEqual(record.lock);
    expect(summary.store).toEqual({ damaged: record.store.damaged });
    expect(summary.exit_code).toBe(r.code);
  });
});
