// A compressed variable that several channels read from different places is inflated once into a temporary file, so that
// each channel reads its part where it lies instead of inflating everything before it again (time linear in the channels).
import { createReadStream, createWriteStream, readdirSync, rmSync } from 'node:fs';
import { mkdtemp, open, readdir, rm, type FileHandle } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Transform } from 'node:stream';
import { threadId } from 'node:worker_threads';
import { pipeline } from 'node:stream/promises';
import { createInflate } from 'node:zlib';
import { RecordingError } from './recording.js';
import { inflateFailure } from './mat-bytes.js';
import { runsHere } from '../runs-here.js';

export interface Spool { file: FileHandle; bytes: number; remove(): Promise<void> }

/** Passes at most `limit` bytes on; more is an error, so that a damaged stream cannot fill the disk. */
function atMost(limit: number, where: string): Transform {
  let seen = 0;
  return new Transform({
    transform(chunk: Buffer, _encoding, done) {
      seen += chunk.length;
      if (seen > limit) done(new RecordingError(`${where}: the compressed data inflates to more than the ${limit} bytes its array element declares; the file is damaged: copy it again`));
      else done(null, chunk);
    },
  });
}

/**
 * Inflates the zlib stream at [start, start + length) of `path` into a file under `dir` (the system's temporary folder),
 * at most `limit` bytes: the size its own array tag declares.
 */
export async function spoolInflated(path: string, start: number, length: number, where: string, limit: number, dir = tmpdir()): Promise<Spool> {
  // The process's and thread's ids in the name: a copy whose thread was stopped before it could remove it is swept once the
  // run has stopped that thread, or by a later run.
  const folder = await mkdtemp(join(dir, `quern-mat-${process.pid}-t${threadId}-`));
  const remove = () => rm(folder, { recursive: true, force: true });
  const target = join(folder, 'variable');
  try {
    try {
      await pipeline(createReadStream(path, { start, end: start + Math.max(0, length) - 1 }), createInflate(), atMost(limit, where), createWriteStream(target));
    } catch (e) {
      if (e instanceof RecordingError) throw e;
      const err = e as NodeJS.ErrnoException;
      if (err.syscall === 'write' || err.code === 'ENOSPC' || err.code === 'EDQUOT') {
        throw new RecordingError(`${where}: inflating it into ${folder} failed (${err.code ?? err.message}); it needs as much room as the variable's uncompressed size: free space there, or set TMPDIR to a folder with room`);
      }
      throw inflateFailure(err, where, start, length);
    }
    const file = await open(target, 'r');
    const bytes = (await file.stat()).size;
    return { file, bytes, remove: async () => { await file.close().catch(() => {}); await remove(); } };
  } catch (e) {
    await remove();
    throw e;
  }
}

/** Removes this process's own copies at once (a run stopped by a signal, whose threads end with it), and returns how many. */
export function removeOwnSpools(dir = tmpdir()): number {
  let names: string[] = [];
  try { names = readdirSync(dir); } catch { return 0; }
  let removed = 0;
  for (const name of names) {
    if (name.match(/^quern-mat-(\d+)-/)?.[1] !== String(process.pid)) continue;
    try { rmSync(join(dir, name), { recursive: true, force: true }); removed++; } catch { /* left for the next run's sweep */ }
  }
  return removed;
}

/**
 * Removes this process's copies made by worker threads that no longer run (`running`: the ids of those that do), as soon
 * as the run has stopped one for a stall or seen it crash, rather than leaving a copy as large as its variable in TMPDIR
 * for the rest of the run; returns how many. The main thread's (id 0) are its own recordings', removed as they close.
 */
export async function sweepStoppedThreads(running: number[], dir = tmpdir()): Promise<number> {
  return removeCopies(dir, /^quern-mat-(\d+)-t(\d+)-/, (m) => Number(m[1]) === process.pid && m[2] !== '0' && !running.includes(Number(m[2])));
}

/**
 * Removes the temporary copies that processes no longer running left behind (a thread stopped for a stall, a run ended
 * with SIGKILL); returns how many. Copies of running processes are theirs; this one's too, unless `own` (a run whose
 * threads have ended: what is left is a stopped or crashed thread's, and a file still open reads on once removed).
 */
export async function sweepSpools(dir = tmpdir(), { own = false } = {}): Promise<number> {
  return removeCopies(dir, /^quern-mat-(\d+)-/, (m) => !runsHere(Number(m[1])) || (own && Number(m[1]) === process.pid));
}

/** Removes the copies in `dir` whose names match `pattern` and that `gone` picks; returns how many. */
async function removeCopies(dir: string, pattern: RegExp, gone: (m: RegExpMatchArray) => boolean): Promise<number> {
  const names = await readdir(dir).catch(() => [] as string[]);
  let removed = 0;
  for (const name of names) {
    const m = name.match(pattern);
    if (!m || !gone(m)) continue;
    await rm(join(dir, name), { recursive: true, force: true }).then(() => removed++, () => {});
  }
  return removed;
}

