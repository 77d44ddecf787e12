// A recording whose reduction stops making progress must not hold the run: the worker beats as it reads, the main
// thread watches the beats (pipeline/reduce/stall-watch.ts), and a batch whose beats stop for the stall limit is given
// up, its thread stopped, and a recording that stalls alone fails with the reason; the next run tries it again, and keeps
// a second stall of an unchanged file as a failure.
import { spawnSync } from 'node:child_process';
import { existsSync, utimesSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { Worker } from 'node:worker_threads';
import { describe, expect, it } from 'vitest';
import { newBeats, watchStall } from '../pipeline/reduce/stall-watch.js';
import { encodeWav } from '../scripts/wav-file.js';
import { quern, readJson, repo, tempDir } from './helpers.js';

const aborted = (signal: AbortSignal) => new Promise<void>((resolve) => signal.addEventListener('abort', () => resolve(), { once: true }));
const sleep = (ms: number) => new Promise((resolve) => setTimeout(resolve, ms));

describe('the stall watch', () => {
  it('stops a thread caught in an endless loop after its last beat', async () => {
    const beats = newBeats();
    // A real thread that beats once and then never again, as a reader looping on a damaged file would.
    const thread = new Worker('const { workerData: b } = require("node:worker_threads"); Atomics.add(b, 0, 1); for (;;) {}', { eval: true, workerData: beats });
    const watch = watchStall(beats, 100);
    try {
      await aborted(watch.signal);
      expect(watch.stalled()).toBe(true);
      expect(Atomics.load(beats, 0)).toBe(1);
      expect((watch.signal.reason as Error).message).toBe('no progress for 0.1 s');
    } finally {
      watch.stop();
      await thread.terminate();
    }
  });

  it('leaves a task alone while it beats, and before its first beat (a thread still starting)', async () => {
    const beats = newBeats();
    const watch = watchStall(beats, 1000, { everyMs: 10 });
    await sleep(1300); // no beat yet: the limit has not started to count
    for (let i = 0; i < 30; i++) { Atomics.add(beats, 0, 1); await sleep(20); }
    expect(watch.stalled()).toBe(false);
    expect(watch.signal.aborted).toBe(false);
    watch.stop();
  });
});

/** An archive of invented test-rig captures, two accelerometers each, finished an hour ago as a nightly run finds them. */
function rigArchive(count: number): { archive: string; out: string } {
  const archive = tempDir(), out = join(archive, '..', `${archive.split('/').pop()}-out`);
  const fs = 8000, hourAgo = new Date(Date.now() - 3_600_000);
  for (let k = 0; k < count; k++) {
    const f = 40 + 10 * k, name = join(archive, `bay-${k + 1}.wav`);
    const x = Float64Array.from({ length: 10 * fs }, (_, i) => 0.4 * Math.sin((2 * Math.PI * f * i) / fs));
    writeFileSync(name, encodeWav({ sampleRate: fs, channels: [x, x], encoding: 'pcm16' }));
    utimesSync(name, hourAgo, hourAgo); // a file modified just now would also be hashed
  }
  writeFileSync(join(archive, 'archive.yaml'), 'groups:\n  - name: bay\n    match: "*.wav"\n    channels:\n      - { name: a1, quantity: acceleration, unit: g }\n      - { name: a2, quantity: acceleration, unit: g }\n');
  return { archive, out };
}

const STALLED = 'made no progress for 0.001 s (--stall-limit): its worker was stopped and the run went on. The file system may have stopped answering, or the reader cannot get through the file; the next run tries it again, and keeps it as failed if it stalls there too with the file unchanged';
const STALLED_AGAIN = 'made no progress for 0.001 s (--stall-limit): its worker was stopped and the run went on. It stalled in the run before as well, with the file unchanged, so it is kept as failed and not tried again until the file, its declaration, the spec or quern changes; once the storage or the file is mended, run with --retry-failed';
const NOT_TRIED = /^not tried: the [34] recordings before it made no progress for 0.001 s each \(--stall-limit\), none reduced between them, so the run stopped reading; the file system may have stopped answering\. The next run tries it again$/;

describe('a run with a stall limit', () => {
  // A limit of a thousandth of a second: no recording gets from its start to its first chunk in that time.
  it('fails the recordings that make no progress, goes on and writes its outputs; the next run reduces them again', () => {
    const { archive, out } = rigArchive(2);
    const stalled = quern('reduce', archive, '--out', out, '--jobs', '1', '--stall-limit', '0.001s', '--quiet');
    expect(stalled.code, stalled.stderr).toBe(1);
    const first = readJson(join(out, 'run.json'));
    expect(first.counts).toMatchObject({ reduced: 0, failed: 2 });
    for (const r of first.recordings) expect([r.status, r.reason]).toEqual(['failed', STALLED]);
    expect(existsSync(join(out, 'features.parquet'))).toBe(true);
    expect(existsSync(join(out, 'quality.html'))).toBe(true);

    const again = quern('reduce', archive, '--out', out, '--jobs', '1', '--quiet');
    expect(again.code, again.stderr).toBe(0);
    const second = readJson(join(out, 'run.json'));
    expect(second.counts).toMatchObject({ reduced: 2, failed: 0 });
    for (const r of second.recordings) expect(r.why).toBe('made no progress within the stall limit before; tried once more');
  });

  it('keeps a recording that stalls in two runs in a row, the file unchanged, as failed, until --retry-failed', () => {
    const { archive, out } = rigArchive(2);
    const stall = () => quern('reduce', archive, '--out', out, '--jobs', '1', '--stall-limit', '0.001s', '--quiet');
    expect(stall().code).toBe(1);
    const twice = stall();
    expect(twice.code, twice.stderr).toBe(1);
    const second = readJson(join(out, 'run.json'));
    for (const r of second.recordings) expect([r.status, r.why, r.reason]).toEqual(['failed', 'made no progress within the stall limit before; tried once more', STALLED_AGAIN]);

    // A third night, with time enough: the failures are kept, not tried (and not costing a stall limit each) again.
    const third = quern('reduce', archive, '--out', out, '--jobs', '1', '--quiet');
    expect(third.code, third.stderr).toBe(1);
    const kept = readJson(join(out, 'run.json'));
    expect(kept.counts).toMatchObject({ reduced: 0, failed: 2 });
    for (const r of kept.recordings) expect([r.why, r.reason]).toEqual(['failed before; file, declaration and spec unchanged', STALLED_AGAIN]);

    const retried = quern('reduce', archive, '--out', out, '--jobs', '1', '--retry-failed', '--quiet');
    expect(retried.code, retried.stderr).toBe(0);
    const fourth = readJson(join(out, 'run.json'));
    expect(fourth.counts).toMatchObject({ reduced: 2, failed: 0 });
    for (const r of fourth.recordings) expect(r.why).toBe('failed before; tried again (--retry-failed)');
  });

  it('stops reading after three recordings stall in a row, as when the storage stops answering, and fails the rest as not tried', () => {
    const { archive, out } = rigArchive(6);
    const r = quern('reduce', archive, '--out', out, '--jobs', '1', '--stall-limit', '0.001s', '--quiet');
    expect(r.code, r.stderr).toBe(1);
    const { counts, recordings } = readJson(join(out, 'run.json'));
    expect(counts).toMatchObject({ reduced: 0, failed: 6 });
    const stalled = recordings.filter((x: { reason: string }) => x.reason === STALLED).length;
    const notTried = recordings.filter((x: { reason: string }) => NOT_TRIED.test(x.reason)).length;
    // Three in a row, or four when two were handed to the thread before the third stalled.
    expect(stalled).toBeGreaterThanOrEqual(3);
    expect(stalled).toBeLessThanOrEqual(4);
    expect(stalled + notTried).toBe(6);

    const again = quern('reduce', archive, '--out', out, '--jobs', '1', '--quiet');
    expect(again.code, again.stderr).toBe(0);
    const second = readJson(join(out, 'run.json'));
    expect(second.counts).toMatchObject({ reduced: 6, failed: 0 });
    expect(second.recordings.filter((x: { why: string }) => x.why === 'not tried before (the recordings before it stalled); tried now').length).toBe(notTried);
  });
});

describe('a process that gave up a thread waiting on storage', () => {
  /** A Node process whose worker thread waits in the operating system, as on storage that stopped answering: opening a named pipe nobody writes. */
  function runWithThread(threadCode: string) {
    const dir = tempDir(), pipe = join(dir, 'silent-storage');
    // mkfifo (coreutils, part of every base system) is the only way to make a named pipe: Node has no call for it.
    expect(spawnSync('mkfifo', [pipe]).status).toBe(0);
    const guard = pathToFileURL(join(repo, 'dist', 'pipeline', 'reduce', 'end-despite-stuck-threads.js')).href;
    const script = `import { Worker } from 'node:worker_threads';
import { endDespiteStuckThreads } from ${JSON.stringify(guard)};
const thread = new Worker(${JSON.stringify(threadCode.replace('PIPE', pipe))}, { eval: true });
setTimeout(() => { thread.terminate(); process.exitCode = 1; endDespiteStuckThreads(1, { afterMs: 500 }); }, 300);`;
    writeFileSync(join(dir, 'night.mjs'), script);
    return spawnSync(process.execPath, [join(dir, 'night.mjs')], { encoding: 'utf8', timeout: 30_000 });
  }

  it('ends, saying why, where Node alone would wait for the thread for ever', () => {
    const r = runWithThread("require('node:fs').openSync('PIPE', 'r');");
    expect(r.signal).toBe('SIGKILL');
    expect(r.stderr).toBe('quern: 1 worker thread given up for making no progress is still waiting on storage 0.5 s after the run finished, which keeps the process from ending; ending it (the outputs and run.json are written)\n');
  });

  it('lets a process whose threads stopped end by itself, with its own exit code', () => {
    const r = runWithThread('for (;;) {}'); // an endless loop in JavaScript, which stopping the thread does reach
    expect([r.status, r.signal, r.stderr]).toEqual([1, null, '']);
  });
});
