// Runs recordings through a pool of worker threads, reporting each as it finishes.
import { availableParallelism } from 'node:os';
import { Tinypool } from 'tinypool';
import type { RecordingJob } from './plan.js';
import type { RecordingResult } from './reduce.js';

export interface PoolOptions {
  jobs?: number;
  onResult?: (r: RecordingResult) => void;
}

export async function reduceAll(jobs: RecordingJob[], { jobs: threads = availableParallelism(), onResult = () => {} }: PoolOptions = {}): Promise<RecordingResult[]> {
  const here = import.meta.url;
  const fromSource = here.endsWith('.ts');
  const pool = new Tinypool({
    filename: new URL(fromSource ? './worker.ts' : './worker.js', here).href,
    minThreads: 1,
    maxThreads: Math.max(1, Math.min(threads, jobs.length || 1)),
    // Run from source (tests), the workers load TypeScript the same way the caller does.
    execArgv: fromSource ? ['--import', 'tsx'] : [],
  });
  try {
    return await Promise.all(jobs.map(async (job) => {
      let r: RecordingResult;
      try {
        r = await pool.run(job);
      } catch (e) {
        // A worker that dies (out of memory, native crash) fails only its own recording.
        r = { recording: job.recording, group: job.group, status: 'failed', reason: `worker stopped: ${(e as Error).message}`, messages: [], rows: [], frames: 0, sampleRate: null, seconds: 0 };
      }
      onResult(r);
      return r;
    }));
  } finally {
    await pool.destroy();
  }
}
