// A run killed while writing leaves its unfinished files under hidden temporary names; the next run holding the same lock
// removes those of the names it writes, and leaves alone those of other lock holders and of writers still running.
import { spawn } from 'node:child_process';
import { existsSync, mkdirSync, readdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { sweepLeftovers } from '../pipeline/outputs/sweep-leftovers.js';
import { quern, readJson, repo, sampleArchiveCopy, tempDir } from './helpers.js';

const temporaries = (dir: string) => (existsSync(dir) ? readdirSync(dir).filter((n) => n.endsWith('.tmp')) : []);
const sleep = (ms: number) => new Promise((resolve) => setTimeout(resolve, ms));

/** Runs quern on the archive and kills it (SIGKILL, as a time limit would) as soon as it has begun writing its tables. */
async function killedWhileWriting(archive: string, out: string): Promise<string[]> {
  const run = spawn(process.execPath, [join(repo, 'dist', 'pipeline', 'cli.js'), 'reduce', archive, '--out', out, '--quiet'], { stdio: 'ignore' });
  const ended = new Promise((resolve) => run.on('exit', resolve));
  let seen: string[] = [];
  for (let waited = 0; waited < 60_000 && run.exitCode == null; waited += 2) {
    seen = temporaries(out).filter((n) => n.startsWith('.features.parquet.'));
    if (seen.length) { run.kill('SIGKILL'); break; }
    await sleep(2);
  }
  await ended;
  return temporaries(out);
}

describe('files a stopped run left half-written', () => {
  it('a run killed while writing leaves temporaries only; the next run removes them, says so, and writes the outputs whole', async () => {
    const archive = sampleArchiveCopy();
    let out = '', left: string[] = [];
    // The write phase lasts about a second here; should a run slip past the watch, a fresh folder is tried.
    for (let attempt = 0; attempt < 3 && !left.length; attempt++) {
      out = join(tempDir(), 'out');
      left = await killedWhileWriting(archive, out);
    }
    expect(left.length).toBeGreaterThan(0);
    expect(existsSync(join(out, 'features.parquet'))).toBe(false); // never under an output's own name

    const again = quern('reduce', archive, '--out', out);
    expect(again.code, again.stderr).toBe(1); // the sample archive's truncated recording
    expect(temporaries(out)).toEqual([]);
    expect(temporaries(join(out, 'cache'))).toEqual([]);
    const run = readJson(join(out, 'run.json'));
    expect([...run.lock.leftovers_removed].sort()).toEqual([...left].sort());
    expect(run.lock.took_over.why).toMatch(/no longer running/);
    expect(again.stdout).toMatch(new RegExp(`lock: {4}removed ${left.length} files? a stopped run left half-written under temporary names`));
    expect(existsSync(join(out, 'features.parquet'))).toBe(true);

    // Nothing left, nothing said.
    const third = quern('reduce', archive, '--out', out);
    expect(readJson(join(out, 'run.json')).lock.leftovers_removed).toEqual([]);
    expect(third.stdout).not.toMatch(/half-written/);
  });

  it('removes only what its own lock covers, and never the file of a writer still running', async () => {
    const out = tempDir();
    for (const dir of ['parts', 'cache']) mkdirSync(join(out, dir));
    const dead = 2 ** 22 + 12345; // above Linux's default pid_max (4,194,304), so no process has it
    const files = {
      whole: ['.features.parquet.DEAD.0a1b2c3d.tmp', '.quality-list.spool.DEAD.00ff00ff.tmp', 'cache/.entries.pack.DEAD.tmp', 'cache/.trends.json.DEAD.12345678.tmp'],
      shard2: ['parts/.features-2-of-3.parquet.DEAD.0a1b2c3d.tmp', 'parts/.run-2-of-3.json.DEAD.89abcdef.tmp', 'cache/.entries-2-of-3.pack.DEAD.tmp'],
      shard1: ['parts/.features-1-of-3.parquet.DEAD.0a1b2c3d.tmp', 'cache/.entries-1-of-3.pack.DEAD.tmp'],
      running: [`.features.parquet.${process.pid}.0a1b2c3d.tmp`, `.features.csv.${process.ppid}.0a1b2c3d.tmp`],
      others: ['notes.tmp', 'cache/entries.pack', '.hidden-by-someone.tmp'],
    };
    const named = (list: string[]) => list.map((f) => f.replace('DEAD', String(dead)));
    for (const f of Object.values(files).flatMap(named)) writeFileSync(join(out, f), 'x');

    expect((await sweepLeftovers(out, { k: 2, n: 3 })).sort()).toEqual(named(files.shard2).sort());
    expect((await sweepLeftovers(out, null)).sort()).toEqual(named(files.whole).sort());
    const kept = [...readdirSync(out).map((f) => f), ...readdirSync(join(out, 'parts')).map((f) => `parts/${f}`), ...readdirSync(join(out, 'cache')).map((f) => `cache/${f}`)].filter((f) => f.includes('.') && !['parts', 'cache'].includes(f));
    expect(kept.sort()).toEqual([...named(files.shard1), ...files.running, ...files.others].sort());
  });
});
