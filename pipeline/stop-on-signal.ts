// A run stopped by a signal (a scheduler's time limit sends SIGTERM, Ctrl-C SIGINT) says so, removes its own temporary
// files, releases its lock and exits as shells expect, 128 plus the signal's number. Its threads end with the process.
// Results already stored stay in the pack, so the next run reuses them.
import { constants } from 'node:os';

/** Where the run's outputs stand, which decides what a stop leaves. */
export type OutputsStand = 'previous' | 'replacing' | 'written';

export interface SignalStop {
  /** What a stop from now on leaves: the previous outputs, ones half put in place, or the new ones whole. */
  now(stand: OutputsStand): void;
  /** The run ends by itself: the signals take their usual course again. */
  off(): void;
}

/** The one line a stop says, by where the outputs stand. */
export function stoppedLine(signal: NodeJS.Signals, stand: OutputsStand): string {
  const kept = 'the results stored so far are kept for the next run';
  if (stand === 'replacing') return `stopped by ${signal} while the new outputs were put in place; outputs.json is absent until the next run writes them again, and ${kept}`;
  if (stand === 'written') return `stopped by ${signal} after the new outputs were written; ${kept}`;
  return `stopped by ${signal}; the outputs are as they were before the run, and ${kept}`;
}

/** The exit status a shell gives a process ended by `signal`: 128 plus its number (SIGINT 130, SIGTERM 143). */
export const signalExitCode = (signal: NodeJS.Signals): number => 128 + constants.signals[signal];

/**
 * Until `off`, SIGINT and SIGTERM end the run: `end` (synchronous, so that nothing else of the run runs meanwhile) removes
 * what the run has under temporary names and its lock, `tell` says the line with the exit code, and the process exits.
 */
export function stopOnSignal(end: () => void, tell: (message: string, exitCode: number) => void, signals: NodeJS.Signals[] = ['SIGINT', 'SIGTERM']): SignalStop {
  let stand: OutputsStand = 'previous';
  const on = (signal: NodeJS.Signals) => {
    off();
    const code = signalExitCode(signal);
    try { end(); } finally {
      try { tell(stoppedLine(signal, stand), code); } finally { process.exit(code); }
    }
  };
  const off = () => { for (const s of signals) process.off(s, on); };
  for (const s of signals) process.on(s, on);
  return { now: (s) => { stand = s; }, off };
}
