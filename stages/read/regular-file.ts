// A recording must be a regular file: opening a named pipe waits for a writer for ever, and a device may never end.
import { statSync, type Stats } from 'node:fs';
import { RecordingError } from './recording.js';

/** What an entry is, in words, when it is not a regular file (null when it is one, or when it cannot be reached). */
export function specialKind(s: Stats | null): string | null {
  if (!s || s.isFile()) return null;
  return s.isFIFO() ? 'a named pipe (FIFO)' : s.isCharacterDevice() || s.isBlockDevice() ? 'a device' : s.isSocket() ? 'a socket' : s.isDirectory() ? 'a folder' : 'not a regular file';
}

/** Refuses, before any open, a path (or a link's target) that is not a regular file, or is an empty one; a missing one is left to the opener to explain. */
export function requireRegularFile(path: string): void {
  const s = statSync(path, { throwIfNoEntry: false }) ?? null;
  const kind = specialKind(s);
  if (kind) throw new RecordingError(`${path} is ${kind}, not a file: a reader would wait on it or never reach its end; copy the recording into a file or remove ${path} from the archive`);
  // Named as what it is, rather than as a file of the wrong format.
  if (s && s.size === 0) throw new RecordingError('the file is empty (0 bytes): a capture or copy that never wrote anything; capture or copy it again');
}
