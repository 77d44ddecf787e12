// Says why a recording reached through a symbolic link cannot be opened: the link, where it points, and what to do.
import { lstat, readlink } from 'node:fs/promises';
import { dirname, resolve } from 'node:path';
import { RecordingError } from './recording.js';

const MEND = 'restore the target, point the link at the recording (ln -sfn TARGET LINK) or remove the link';
const GRANT = 'give this process read access to the target (and search access to its folders) or remove the link';

/** What went wrong with the target, and what to do, by the error's code. */
const WHY: Record<string, string> = {
  ENOENT: `where nothing is found (the target is missing); ${MEND}`,
  ENOTDIR: `where nothing is found (the target is missing); ${MEND}`,
  ELOOP: `which leads round a loop of links; ${MEND}`,
  EACCES: `which this process may not read; ${GRANT}`,
  EPERM: `which this process may not read; ${GRANT}`,
};

/** The error to report when `path` failed to open with `error` and is a symbolic link; null when it is not a link. */
export async function explainLink(path: string, error: unknown): Promise<RecordingError | null> {
  const code = (error as NodeJS.ErrnoException | null)?.code;
  if (!code) return null;
  if (!(await lstat(path).catch(() => null))?.isSymbolicLink()) return null;
  const target = await readlink(path).then((t) => resolve(dirname(path), t), () => '(the link cannot be read)');
  return new RecordingError(`the symbolic link ${path} points to ${target}, ${WHY[code] ?? `which cannot be opened (${code}); ${MEND}`}`);
}
