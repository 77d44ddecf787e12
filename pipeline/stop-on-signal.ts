// A run stopped by a signal (a scheduler's time limit sends SIGTERM, Ctrl-C SIGINT) says so, removes its own temporary
// files, releases its lock and exits as shells expect, 128 plus the signal's number. Its threads end with the process.
// Results already stored stay in the pack, so the next run reuses them. An error nothing waits for (thrown in a callback,
// a rejection no one handles) ends the run the same way, with exit code 2 and its stack, rather than leave the lock.
import { constants } from 'node:os';

/**
 * Where the run's outputs stand, which decides what a stop leaves: the previous ones untouched, the new ones being put in
 * place (outputs.json removed), the new ones whole with run.json and outputs.json, or the previous ones found current and
 * left as they are, with this run's run.json beside them.
 */
export type OutputsStand = 'previous' | 'replacing' | 'written' | 'unchanged';

export interface SignalStop {
  /** What a stop from now on leaves: the previous outputs, ones half put in place, the new ones whole, or unchanged ones with this run's record. */
  now(stand: OutputsStand): void;
  /** The run ends by itself: the signals and errors take their usual course again. */
  off(): void;
}

/** The stop, with every change of where the outputs stand told to `follow` as well. */
export const followed = (stop: SignalStop, follow?: (stand: OutputsStand) => void): SignalStop =>
  follow ? { now: (s) => { stop.now(s); follow(s); }, off: stop.off } : stop;

/** Says why the run stopped, with its exit code and, for an error in quern, its stack. */
export type StopTell = (message: string, exitCode: number, details?: { stack?: string }) => void;

/** Where the outputs stand, in the words of a line that says why a run stopped. */
export function outputsWords(stand: OutputsStand): string {
  if (stand === 'replacing') return 'the new outputs were being put in place: outputs.json is absent until the next run writes them again';
  if (stand === 'written') return 'the new outputs, run.json and outputs.json were written by this run and are in place';
  if (stand === 'unchanged') return 'the outputs, unchanged, are in place, with this run\'s run.json';
  return 'the previous outputs are kept';
}

/** The one line a stop says, by where the outputs stand; `cause` is a signal's name or the words for an error. */
export function stoppedLine(signal: NodeJS.Signals | 'an unexpected error', stand: OutputsStand): string {
  const kept = 'the results stored so far are kept for the next run';
  if (stand === 'replacing') return `stopped by ${signal} while the new outputs were put in place; outputs.json is absent until the next run writes them again, and ${kept}`;
  if (stand === 'written') return `stopped by ${signal} after the new outputs were written; ${kept}`;
  if (stand === 'unchanged') return `stopped by ${signal} after the run's record was written; the outputs, unchanged, are in place, and ${kept}`;
  return `stopped by ${signal}; the outputs are as they were before the run, and ${kept}`;
}

/**
 * The line of a run that completed (its outputs and run.json in place) but could not write its closing lines (a full
 * disk or a closed pipe on standard output): the outputs need no second run, the log lacks its end, hence exit code 2.
 */
export const unfinishedLogLine = (stand: OutputsStand, cause: string, runCode: number): string =>
  `the run completed and ${outputsWords(stand)}, but its closing lines could not be written (${cause}); run.json holds the run's record. Exit code 2 rather than the run's own ${runCode}, since its log is incomplete; the outputs need no second run`;

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
