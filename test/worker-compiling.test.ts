// Where the workers' code is optimised (pipeline/engine-settings.ts, settleWorkerCompiling): in each worker's own thread
// when the workers take every core, on V8's background threads when a core is left over. Read from V8's own trace of
// its optimising compiler (--trace-opt), on a real run of the sample archive.
import { availableParallelism } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { settleWorkerCompiling } from '../pipeline/engine-settings.js';
import { quernUnder, removeTempDirs, sampleArchiveCopy, tempDir } from './helpers.js';

afterAll(removeTempDirs);

/** How many functions V8 optimised in the run, on a background thread and in the calling thread. */
function optimisedIn(jobs: number): { background: number; inline: number } {
  const r = quernUnder(['--trace-opt'], 'reduce', sampleArchiveCopy(), '--out', join(tempDir(), 'out'), '--jobs', String(jobs));
  expect(r.code, r.stderr).toBeLessThanOrEqual(1); // the sample archive plants one truncated recording
  const count = (mode: string) => r.stdout.split('\n').filter((l) => l.startsWith('[compiling method') && l.includes(`ConcurrencyMode::${mode}`)).length;
  return { background: count('kConcurrent'), inline: count('kSynchronous') };
}

describe('where the workers optimise their code', () => {
  it('inline exactly when the workers take every core', () => {
    expect(settleWorkerCompiling(2, 2)).toBe(true);
    expect(settleWorkerCompiling(4, 2)).toBe(true);
    expect(settleWorkerCompiling(1, 2)).toBe(false);
    expect(settleWorkerCompiling(1, 1)).toBe(true);
    settleWorkerCompiling(1, 2); // V8's own setting again for the rest of this thread's tests
  });

  it('in the workers themselves when they take every core, the main thread still on a background thread', () => {
    const all = optimisedIn(availableParallelism());
    expect(all.inline).toBeGreaterThan(10);
    expect(all.background).toBeGreaterThan(0);
  }, 60_000);

  it.runIf(availableParallelism() > 1)('on background threads only while a core is left over', () => {
    const fewer = optimisedIn(availableParallelism() - 1);
    expect(fewer.inline).toBe(0);
    expect(fewer.background).toBeGreaterThan(10);
  }, 60_000);
});
