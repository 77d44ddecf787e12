// Files appear whole or not at all: written under a hidden temporary name, flushed, then renamed into place.
import { randomBytes } from 'node:crypto';
import { open, rename, rm, writeFile } from 'node:fs/promises';
import { basename, dirname, join } from 'node:path';
import { openTemporary } from './temporary-file.js';

/**
 * Whole or nothing under a crash of the process. `durable` also flushes to the disk, so the file survives a power cut;
 * cache entries skip that (a torn entry reads as absent and is recomputed), which saves two disk flushes a recording.
 */
export async function writeFileAtomic(path: string, data: Uint8Array | string | AsyncIterable<Uint8Array>, { durable = true } = {}): Promise<void> {
  const tmp = join(dirname(path), `.${basename(path)}.${process.pid}.${randomBytes(4).toString('hex')}.tmp`);
  const fh = await openTemporary(tmp);
  try {
    await writeFile(fh, data);
    if (durable) await fh.sync();
    await fh.close();
    await rename(tmp, path);
  } catch (e) {
    await fh.close().catch(() => {});
    await rm(tmp, { force: true });
    throw e;
  }
  if (!durable) return;
  // Make the rename itself durable (a power cut after a rename must not bring the old file back).
  const dir = await open(dirname(path), 'r');
  try { await dir.sync(); } catch { /* some file systems refuse fsync on folders */ } finally { await dir.close(); }
}
