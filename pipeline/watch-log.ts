// The run's log is what it writes to standard error (progress lines, --log json events, the lines that say why it stopped),
// which a nightly job sends to a file. A write there that fails (a full disk, ENOSPC; a failing device, EIO) costs the log,
// not the product: the run goes on and writes its tables and report, and says once, at its end, that its log is incomplete.
import { readlinkSync } from 'node:fs';

/** The log's first failed write: where the log went, and the system's words for why. */
export interface LogFailure { file: string; cause: string }

export interface LogWatch {
  /** The first failed write, or null while every write has gone through. */
  failure(): LogFailure | null;
}

/** Where file descriptor `fd` leads (the file a shell's `2>>night.log` opened; Linux's /proc), or null where that cannot be read. */
function fdTarget(fd: number): string | null {
  try { return readlinkSync(`/proc/self/fd/${fd}`); } catch { return null; }
}

/**
 * Keeps the first write error of `stream` (file descriptor `fd`) instead of letting it end the process; a closed pipe
 * (EPIPE, a reader that quit early) is no failure of the log's storage and is passed over, as before.
 */
export function watchLog(stream: NodeJS.WriteStream, fd = 2): LogWatch {
  let failed: LogFailure | null = null;
  stream.on('error', (e: NodeJS.ErrnoException) => {
    if (e.code === 'EPIPE' || failed) return;
    const target = fdTarget(fd);
    failed = { file: target ? `standard error, ${target}` : 'standard error', cause: e.message };
  });
  return { failure: () => failed };
}

/** The exit code of a command whose log failed: 2, unless it already is, or a signal's (the log's loss is the lesser news). */
export const codeAfterLogFailure = (code: number): number => (code >= 128 ? code : 2);

/** The line that names the failure once (on standard output, since standard error is what failed), with where the outputs stand. */
export function logFailedLine(f: LogFailure, outputs: string, runCode: number): string {
  const code = runCode === 2 || runCode >= 128 ? `exit code ${runCode}` : `exit code 2 rather than the run's own ${runCode}, since its log is incomplete`;
  return `quern: the run's log (${f.file}) could not be written: ${f.cause}; its lines from then on are missing, and the run went on without them: ${outputs}; ${code}`;
}
