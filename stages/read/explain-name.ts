// Says why a recording whose file name is not UTF-8 cannot be opened: Node lists such a name with U+FFFD in place of
// the bytes it cannot decode, and that name leads nowhere.
import { RecordingError } from './recording.js';

/** The error to report when `path` failed to open with `error` because its name did not survive decoding; null otherwise. */
export function explainName(path: string, error: unknown): RecordingError | null {
  if ((error as NodeJS.ErrnoException | null)?.code !== 'ENOENT' || !path.includes('\uFFFD')) return null;
  return new RecordingError(`the file name is not valid UTF-8 (written by a system with another character set; shown here with \uFFFD), so it cannot be opened by name; rename it in UTF-8, or move it out of the archive`);
}
