// A run stopped by SIGTERM at any moment leaves no temporary file and no lock in its output folder: the stop lists the
// folder at once (a synchronous readdir on the main thread), so every temporary file must exist by then, never be in the
// making (pipeline/outputs/temporary-file.ts). Node runs a signal's listener on its event loop, between two pieces of
// JavaScript (Node.js documentation, process "Signal events"); an open without O_CREAT never creates a name (POSIX open()).
import { spawn } from 'node:child_process';
import { existsSync, mkdirSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { writeFileAtomic } from '../pipeline/outputs/atomic.js';
import { StagedFile } from '../pipeline/outputs/staged.js';
import { removeOwnTemporaries } from '../pipeline/outputs/sweep-leftovers.js';
import { uniform } from './dsp-signals.js';
import { repo, sampleArchiveCopy, tempDir } from './helpers.js';

const cli = join(repo, 'dist', 'pipeline', 'cli.js');
const temporaries = (out: string) => (existsSync(out) ? readdirSync(out, { recursive: true }).map(String).filter((f) => f.endsWith('.tmp')) : []);

/** The built command on `archive` into `out`, sent SIGTERM `afterMs` after it starts (unless it ends first): its exit code (or the signal that ended it) and how long it ran. */
async function reduceStoppedAfter(archive: string, out: string, afterMs: number) {
  const started = Date.now();
  const run = spawn(process.execPath, [cli, 'reduce', archive, '--out', out, '--jobs', '1', '--quiet'], { stdio: 'ignore' });
  const timer = setTimeout(() => run.kill('SIGTERM'), afterMs);
  const code = await new Promise<number | NodeJS.Signals | null>((resolve) => run.on('exit', (c, signal) => resolve(c ?? signal)));
  clearTimeout(timer);
  return { code, ms: Date.now() - started };
}

describe('a run stopped by SIGTERM at any moment', () => {
  it('leaves no temporary file and no lock, in 20 runs of the sample archive each stopped at a seeded random moment', async () => {
    const archive = sampleArchiveCopy(), root = tempDir();
    // A whole run first, to know how long one lasts (its own exit code: 1, for the sample archive's cut recording).
    const whole = await reduceStoppedAfter(archive, join(root, 'whole'), 600_000);
    expect(whole.code).toBe(1);
    const u = uniform(20_261_122);
    const codes: (number | NodeJS.Signals | null)[] = [];
    for (let i = 0; i < 20; i++) {
      const out = join(root, `out-${i}`);
      const { code } = await reduceStoppedAfter(archive, out, 200 + u() * (whole.ms - 200));
      codes.push(code);
      // Stopped (143), ended by the signal itself before its stop was set (a shell reports 143 too), or finished first (1).
      expect([143, 'SIGTERM', 1], `run ${i}`).toContain(code);
      expect(temporaries(out), `run ${i}`).toEqual([]);
      expect(existsSync(join(out, 'run.lock')), `run ${i}`).toBe(false);
    }
    expect(codes.filter((c) => c === 143).length).toBeGreaterThanOrEqual(10);
  }, 240_000);
});

describe('a temporary file exists as soon as its writing starts', () => {
  it('a staged file: the stop finds and removes it, and the writing that goes on cannot bring it back', async () => {
    const out = tempDir();
    const f = new StagedFile(join(out, 'quality.json'));
    await f.write('{}\n');
    // close() opens the file; the stop runs before any of that opening's work comes back.
    const closing = f.close();
    expect(existsSync(f.tmp)).toBe(true);
    expect(removeOwnTemporaries(out, null)).toEqual([`.quality.json.${process.pid}.${f.tmp.split('.').at(-2)}.tmp`]);
    // Its opening either came before the removal (and writes on to a file without a name) or fails: no name either way.
    await closing.catch(() => {});
    expect(readdirSync(out)).toEqual([]);
  });

  it('an atomically written file: the same', async () => {
    const out = tempDir();
    mkdirSync(join(out, 'cache'));
    const writing = writeFileAtomic(join(out, 'cache', 'trends.json'), '{"digest":"x"}\n');
    expect(readdirSync(join(out, 'cache'))).toHaveLength(1);
    expect(removeOwnTemporaries(out, null)).toEqual([expect.stringMatching(new RegExp(`^cache/\\.trends\\.json\\.${process.pid}\\.[0-9a-f]{8}\\.tmp$`))]);
    // Its rename finds no temporary file, so nothing is put in place either.
    await expect(writing).rejects.toThrow(/ENOENT/);
    expect(readdirSync(join(out, 'cache'))).toEqual([]);
  });
});
