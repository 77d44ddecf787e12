// A recording whose reduction stops making progress must not hold the run: the worker beats as it reads, the main
// thread watches the beats (pipeline/reduce/stall-watch.ts), and a batch whose beats stop for the stall limit is given
// up, its thread stopped, and a recording that stalls alone fails with the reason; the next run tries it again.
import { existsSync, utimesSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { Worker } from 'node:worker_threads';
import { describe, expect, it } from 'vitest';
import { newBeats, watchStall } from '../pipeline/reduce/stall-watch.js';
import { encodeWav } from '../scripts/wav-file.js';
import { quern, readJson, tempDir } from './helpers.js';

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

describe('a run with a stall limit', () => {
  it('fails the recordings that make no progress, goes on and writes its outputs; the next run reduces them again', () => {
    const archive = tempDir(), out = join(archive, '..', `${archive.split('/').pop()}-out`);
    const fs = 8000;
    // An invented test rig's two accelerometer captures, a 40 Hz and a 90 Hz tone.
    for (const [name, f] of [['bay-1.wav', 40], ['bay-2.wav', 90]] as const) {
      const x = Float64Array.from({ length: 2 * fs }, (_, i) => 0.4 * Math.sin((2 * Math.PI * f * i) / fs));
      writeFileSync(join(archive, name), encodeWav({ sampleRate: fs, channels: [x, x], encoding: 'pcm16' }));
      // Captures finished an hour ago, as a nightly run finds them (a file modified just now is also hashed).
      const hourAgo = new Date(Date.now() - 3_600_000);
      utimesSync(join(archive, name), hourAgo, hourAgo);
    }
    writeFileSync(join(archive, 'archive.yaml'), 'groups:\n  - name: bay\n    match: "*.wav"\n    channels:\n      - { name: a1, quantity: acceleration, unit: g }\n      - { name: a2, quantity: acceleration, unit: g }\n');
    // A limit of a thousandth of a second: no recording gets from its start to its first chunk in that time.
    const stalled = quern('reduce', archive, '--out', out, '--jobs', '1', '--stall-limit', '0.001s', '--quiet');
    expect(stalled.code, stalled.stderr).toBe(1);
    const first = readJson(join(out, 'run.json'));
    expect(first.counts).toMatchObject({ reduced: 0, failed: 2 });
    for (const r of first.recordings) {
      expect(r.status).toBe('failed');
      expect(r.reason).toBe('made no progress for 0.001 s (--stall-limit): its worker was stopped and the run went on. The file system may have stopped answering, or the reader cannot get through the file; the next run tries it again');
    }
    expect(existsSync(join(out, 'features.parquet'))).toBe(true);
    expect(existsSync(join(out, 'quality.html'))).toBe(true);

    const again = quern('reduce', archive, '--out', out, '--jobs', '1', '--quiet');
    expect(again.code, again.stderr).toBe(0);
    const second = readJson(join(out, 'run.json'));
    expect(second.counts).toMatchObject({ reduced: 2, failed: 0 });
    for (const r of second.recordings) expect(r.why).toBe('stopped before for making no progress; tried again');
  });
});
