// Runs recordings through a pool of worker threads, reporting each as it finishes.
import { availableParallelism } from 'node:os';
import { existsSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { Tinypool } from 'tinypool';
import { packageRoot } from '../declare/package-files.js';
import type { RecordingJob } from '../plan/plan.js';
import type { RecordingOutput } from './result.js';

export interface PoolOptions {
  jobs?: number;
  onResult?: (r: RecordingOutput) => void | Promise<void>;
}

/** The compiled worker; run from TypeScript source (the tests), the build in dist/ serves, as `npm test` builds first. */
function workerFile(): string {
  const here = fileURLToPath(import.meta.url);
  const built = here.endsWith('.ts') ? join(packageRoot, 'dist', 'pipeline', 'reduce', 'worker.js') : join(dirname(here), 'worker.js');
  if (!existsSync(built)) throw new Error(`quern: worker code ${built} is missing; run "npm run build" first`);
  return pathToFileURL(built).href;
}

export async function reduceAll(jobs: RecordingJob[], { jobs: threads = availableParallelism(), onResult = () => {} }: PoolOptions = {}): Promise<RecordingOutput[]> {
  if (jobs.length === 0) return [];
  const pool = new Tinypool({
    filename: workerFile(),
    minThreads: 1,
    maxThreads: Math.max(1, Math.min(threads, jobs.length || 1)),
  });
  try {
    return await Promise.all(jobs.map(async (job) => {
      let r: RecordingOutput;
      try {
        r = await pool.run(job);
      } catch (e) {
        // A worker that dies (out of memory, native crash) fails only its own recording.
        r = { recording: job.recording, group: job.group, status: 'failed', reason: `worker stopped: ${(e as Error).message}`, base: null, groups: {}, seconds: 0 };
      }
      await onResult(r);
      return r;
    }));
  } finally {
    await pool.destroy();
  }
}
