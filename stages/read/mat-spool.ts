// A compressed variable that several channels read from different places is inflated once into a temporary file, so that
// each channel reads its part where it lies instead of inflating everything before it again (time linear in the channels).
import { createReadStream, createWriteStream } from 'node:fs';
import { mkdtemp, open, rm, type FileHandle } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pipeline } from 'node:stream/promises';
import { createInflate } from 'node:zlib';
import { RecordingError } from './recording.js';

export interface Spool { file: FileHandle; bytes: number; remove(): Promise<void> }

/** Inflates the zlib stream at [start, start + length) of `path` into a file under `dir` (the system's temporary folder). */
export async function spoolInflated(path: string, start: number, length: number, where: string, dir = tmpdir()): Promise<Spool> {
  const folder = await mkdtemp(join(dir, 'quern-mat-'));
  const remove = () => rm(folder, { recursive: true, force: true });
  const target = join(folder, 'variable');
  try {
    try {
      await pipeline(createReadStream(path, { start, end: start + Math.max(0, length) - 1 }), createInflate(), createWriteStream(target));
    } catch (e) {
      const err = e as NodeJS.ErrnoException;
      if (err.syscall === 'write' || err.code === 'ENOSPC' || err.code === 'EDQUOT') {
        throw new RecordingError(`${where}: inflating it into ${folder} failed (${err.code ?? err.message}); it needs as much room as the variable's uncompressed size: free space there, or set TMPDIR to a folder with room`);
      }
      const cut = /unexpected end/i.test(err.message ?? '');
      throw new RecordingError(`${where}: the compressed data (${length} bytes from byte ${start}) ${cut ? 'ends before its stream does; the file is cut short' : `cannot be inflated (${err.message}); the file is damaged`}: copy it again`);
    }
    const file = await open(target, 'r');
    const bytes = (await file.stat()).size;
    return { file, bytes, remove: async () => { await file.close().catch(() => {}); await remove(); } };
  } catch (e) {
    await remove();
    throw e;
  }
}
