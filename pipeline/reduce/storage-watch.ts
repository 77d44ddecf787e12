// Storage that stops answering (a network share whose server went away) can hold a run for ever where the stall watch
// does not reach: the main thread's scan of the archive, its hashing and its writing. A run left waiting keeps its lock
// fresh, so every later night is refused. The run asks the storage a question now and then (statfs, which a network file
// system answers from its server, not from a cache) and ends the process when one has gone unanswered for the limit.
import { writeSync } from 'node:fs';
import { statfs } from 'node:fs/promises';

export interface StorageWatch { stop(): void }

/**
 * Asks the storage of `paths` (the archive, the output folder) every `everyMs`, and ends the process (SIGKILL: 137 in a
 * shell, the only way past threads waiting in the operating system) when a question goes unanswered for `limitMs`. Its
 * questions wait in Node's pool of file system threads like the run's own, so a pool held by a storage that stopped is
 * noticed too. A question answered with an error (no such folder yet) is an answer.
 */
export function watchStorage(paths: string[], limitMs: number, { everyMs = Math.min(10_000, Math.max(1, limitMs / 4)), say = (m: string) => { writeSync(2, m); } } = {}): StorageWatch {
  const asked = new Map<string, number>();
  const timer = setInterval(() => {
    const now = Date.now();
    for (const path of paths) {
      const since = asked.get(path);
      if (since === undefined) {
        asked.set(path, now);
        statfs(path).then(() => asked.delete(path), () => asked.delete(path));
      } else if (now - since >= limitMs) {
        say(`quern: ${path} has not answered for ${(now - since) / 1000} s (--storage-limit): its storage seems to have stopped; ending the run. `
          + 'The outputs are as they were before it; the next run takes over its lock and removes what it left half-written\n');
        process.kill(process.pid, 'SIGKILL');
      }
    }
  }, everyMs);
  // The watch never keeps a finished run alive.
  timer.unref();
  return { stop: () => clearInterval(timer) };
}
