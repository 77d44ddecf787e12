// Storage that stops answering must not hold a night's run (and its lock) for ever: the run asks the archive's and the
// output folder's storage now and then, and ends the process when a question goes unanswered for --storage-limit
// (pipeline/reduce/storage-watch.ts).
import { spawnSync } from 'node:child_process';
import { existsSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { watchStorage } from '../pipeline/reduce/storage-watch.js';
import { quern, repo, sampleArchiveCopy, tempDir } from './helpers.js';

const sleep = (ms: number) => new Promise((resolve) => setTimeout(resolve, ms));

describe('the storage watch', () => {
  it('leaves a process alone while its storage answers, however short the limit', async () => {
    const dir = tempDir();
    // Were it to end the process wrongly, it would end this test's own (SIGKILL), which fails the suite.
    const watch = watchStorage([dir, repo], 200, { everyMs: 5 });
    await sleep(1500);
    watch.stop();
    expect(true).toBe(true);
  });

  it('ends a run whose storage stops answering after the limit, naming the storage, with nothing written', () => {
    const archive = sampleArchiveCopy(), out = join(tempDir(), 'out');
    // A named pipe nobody writes, in place of archive.yaml: reading it waits in the operating system, as a read from a
    // network share whose server went away does. With one thread in Node's pool of file system threads (UV_THREADPOOL_SIZE,
    // 4 by default), that read holds the pool as a gone share holds every thread that asks it, so the watch's own question
    // waits too. mkfifo (coreutils, part of every base system) is the only way to make a named pipe: Node has no call for it.
    rmSync(join(archive, 'archive.yaml'));
    expect(spawnSync('mkfifo', [join(archive, 'archive.yaml')]).status).toBe(0);
    const started = Date.now();
    const r = spawnSync(process.execPath, [join(repo, 'dist', 'pipeline', 'cli.js'), 'reduce', archive, '--out', out, '--storage-limit', '2s', '--quiet'], {
      encoding: 'utf8', timeout: 60_000, env: { ...process.env, UV_THREADPOOL_SIZE: '1', FORCE_COLOR: '0' },
    });
    expect(r.signal).toBe('SIGKILL');
    expect(Date.now() - started).toBeGreaterThanOrEqual(2000);
    expect(r.stderr).toMatch(new RegExp(`^quern: ${archive.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')} has not answered for \\d+(\\.\\d+)? s \\(--storage-limit\\): its storage seems to have stopped; ending the run\\. The outputs are as they were before it`));
    expect(existsSync(join(out, 'features.parquet'))).toBe(false);
  });

  it('refuses a limit of no time', () => {
    const r = quern('reduce', sampleArchiveCopy(), '--storage-limit', '0s');
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/--storage-limit.*a storage limit of no time would end every run; give a span such as 5m/);
  });
});
