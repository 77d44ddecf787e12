// Loaded with --import into quern's process by the bench's collector section (QUERN_BENCH_GC names where to write):
// each thread, main and workers alike, sums its garbage collector's pauses (PerformanceObserver's 'gc' entries) and
// keeps the sum and its own age in a file of its own. Workers are ended by the pool without an exit event, so the file
// is written after each collection and every 200 ms.
import { writeFileSync } from 'node:fs';
import { PerformanceObserver, performance } from 'node:perf_hooks';
import { isMainThread, threadId } from 'node:worker_threads';

export interface ThreadCollections { thread: string; pausesMs: number; collections: number; lifeMs: number }

const file = process.env.QUERN_BENCH_GC;
if (file) {
  let pausesMs = 0, collections = 0;
  const save = () => {
    const c: ThreadCollections = { thread: isMainThread ? 'main thread' : `worker ${threadId}`, pausesMs, collections, lifeMs: performance.now() };
    writeFileSync(`${file}.${threadId}.json`, JSON.stringify(c));
  };
  new PerformanceObserver((list) => {
    for (const e of list.getEntries()) { pausesMs += e.duration; collections++; }
    save();
  }).observe({ entryTypes: ['gc'] });
  setInterval(save, 200).unref();
  process.on('exit', save);
}
