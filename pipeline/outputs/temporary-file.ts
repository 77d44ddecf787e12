// A run's temporary files are created with a synchronous open, so that a stop on a signal never meets one in the making.
import { closeSync, openSync } from 'node:fs';
import { open, type FileHandle } from 'node:fs/promises';

/**
 * Creates (or empties) the temporary file `tmp`, at once on the call, and opens it for writing. A signal's handler runs
 * on the main thread between two pieces of its work, never during a synchronous call, so every name created here exists
 * by the time the stop lists the folder (stop-on-signal.ts); the asynchronous open that follows may not create (no
 * O_CREAT), so a name the stop removed while it waited stays removed. A run makes tens of these (its outputs, spools and
 * kept records), never one per recording.
 */
export async function openTemporary(tmp: string): Promise<FileHandle> {
  closeSync(openSync(tmp, 'w'));
  return open(tmp, 'r+');
}
