// A run's fixed cost (a tiny archive, the whole command as a user runs it) and the garbage collector's share of each
// thread's time on one worker, for the short 24-bit recordings and the long statistics run.
import { readdirSync, readFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import type { ThreadCollections } from '../gc-share.js';
import { makeBenchArchive } from '../generate.js';
import { command, here, quern, say, spread, work } from '../harness.js';

export function fixedCost(runs = 11): void {
  const tiny = join(work, 'tiny-one');
  makeBenchArchive(tiny, [{ name: 't.wav', frames: 2_560 }]);
  const out = join(work, 'fixed-out'), s: number[] = [];
  for (let i = 0; i < runs; i++) {
    rmSync(out, { recursive: true, force: true });
    s.push(command(['reduce', tiny, '--out', out, '--jobs', '2']));
  }
  say(`\na run's fixed cost: one recording, 4 channels × 0.1 s, default spec, the whole command as a user runs it (target < 0.5 s)`);
  say(`  ${spread(s).text}`);
}

/** `jobs` workers reducing `archive` with every thread summing its collector's pauses (bench/gc-share.ts). */
function collections(archive: string, jobs: number): ThreadCollections[] {
  const stem = join(work, `gc-${Math.random().toString(36).slice(2)}`);
  process.env.QUERN_BENCH_GC = stem;
  try {
    quern(archive, jobs, undefined, undefined, ['--import', join(here, 'gc-share.js')]);
  } finally {
    delete process.env.QUERN_BENCH_GC;
  }
  const prefix = stem.split('/').pop()!;
  return readdirSync(work).filter((f) => f.startsWith(prefix)).map((f) => JSON.parse(readFileSync(join(work, f), 'utf8')) as ThreadCollections);
}

/** Each thread's share as the median of `runs` runs (a shared machine's pauses vary from run to run), with every run's share beside it. */
export function collectorShare(shapes: { label: string; archive: string }[], { runs = 3, jobs = 1 } = {}): void {
  say(`\ngarbage collection, ${jobs === 1 ? 'one worker' : `--jobs ${jobs}`}: each thread's collector pauses against its own time, the median of ${runs} runs (target < 2 %)`);
  for (const { label, archive } of shapes) {
    const byThread = new Map<string, ThreadCollections[]>();
    for (let r = 0; r < runs; r++) for (const c of collections(archive, jobs)) (byThread.get(c.thread) ?? byThread.set(c.thread, []).get(c.thread)!).push(c);
    for (const [thread, all] of [...byThread].sort(([a], [b]) => a.localeCompare(b))) {
      const share = (c: ThreadCollections) => (100 * c.pausesMs) / c.lifeMs;
      const sorted = [...all].sort((a, b) => share(a) - share(b)), mid = sorted[(sorted.length - 1) >> 1];
      say(`  ${label.padEnd(40)} ${thread.padEnd(12)} ${String(mid.collections).padStart(4)} collections ${mid.pausesMs.toFixed(0).padStart(5)} ms in ${(mid.lifeMs / 1000).toFixed(2)} s: ${share(mid).toFixed(1)} % (runs: ${all.map((c) => `${share(c).toFixed(1)} %`).join(', ')})`);
    }
  }
}
