// A run stopped by a signal (a scheduler's time limit sends SIGTERM, Ctrl-C SIGINT) says so, removes its own temporary
// files, releases its lock and exits as shells expect, 128 plus the signal's number. Its threads end with the process.
// Results already stored stay in the pack, so the next run reuses them. An error nothing waits for (thrown in a callback,
// a rejection no one handles) ends the run the same way, with exit code 2 and its stack, rather than leave the lock.
import { constants } from 'node:os';

/** Where the run's outputs stand, which decides what a stop leaves. */
export type OutputsStand = 'previous' | 'replacing' | 'written';

export interface SignalStop {
  /** What a stop from now on leaves: the previous outputs, ones half put in place, or the new ones whole. */
  now(stand: OutputsStand): void;
  /** The run ends by itself: the signals and errors take their usual course again. */
  off(): void;
}

/** Says why the run stopped, with its exit code and, for an error in quern, its stack. */
export type StopTell = (message: string, exitCode: number, details?: { stack?: string }) => void;

/** The one line a stop says, by where the outputs stand; `cause` is a signal's name or the words for an error. */
export function stoppedLine(signal: NodeJS.Signals | 'an unexpected error', stand: OutputsStand): string {
  const kept = 'the results stored so far are kept for the next run';
  if (stand === 'replacing') return `stopped by ${signal} while the new outputs were put in place; outputs.json is absent until the next run writes them again, and ${kept}`;
  if (stand === 'written') return `stopped by ${signal} after the new outputs were written; ${kept}`;
  return `stopped by ${signal}; the outputs are as they were before the run, and ${kept}`;
}

/** The line an error nothing waited for says: where the outputs stand, that the lock is gone, and what to do with the stack. */
export const crashedLine = (stand: OutputsStand): string =>
  `${stoppedLine('an unexpected error', stand)}; its temporary files and lock are removed. Please report it with what follows:`;

/** The exit status a shell gives a process ended by `signal`: 128 plus its number (SIGINT 130, SIGTERM 143). */
export const signalExitCode = (signal: NodeJS.Signals): number => 128 + constants.signals[signal];

/** The exit code of a run ended by an error in quern (as cli.ts's EXIT.unusable). */
export const CRASH_EXIT_CODE = 2;

/**
 * Until `off`, SIGINT and SIGTERM end the run, and so does an uncaught exception or unhandled rejection: `end`
 * (synchronous, so that nothing else of the run runs meanwhile) removes what the run has under temporary names and its
 * lock, `tell` says the line with the exit code (and an error's stack), and the process exits. The error handlers go
 * before any other (the command's own, which knows nothing of the lock), and exit before those run.
 */
export function stopOnSignal(end: () => void, tell: StopTell, signals: NodeJS.Signals[] = ['SIGINT', 'SIGTERM']): SignalStop {
  let stand: OutputsStand = 'previous';
  const finish = (message: string, code: number, details?: { stack?: string }) => {
    off();
    try { end(); } finally {
      try { tell(message, code, details); } finally { process.exit(code); }
    }
  };
  const on = (signal: NodeJS.Signals) => finish(stoppedLine(signal, stand), signalExitCode(signal));
  const crashed = (e: unknown) => finish(crashedLine(stand), CRASH_EXIT_CODE, { stack: (e as Error)?.stack ?? String(e) });
  const off = () => {
    for (const s of signals) process.off(s, on);
    process.off('uncaughtException', crashed);
    process.off('unhandledRejection', crashed);
  };
  for (const s of signals) process.on(s, on);
  process.prependListener('uncaughtException', crashed);
  process.prependListener('unhandledRejection', crashed);
  return { now: (s) => { stand = s; }, off };
}
