// A worker given up for a stall may be waiting in the operating system (a read from storage that stopped answering),
// where stopping the thread cannot reach it. Node then never ends the process, even on process.exit, since it waits for
// every thread to end: the night's command would hang after writing its outputs, and hold its lock into the next night.

/**
 * Once a command that gave up threads has finished, ends the process if it is still there `afterMs` later, saying why.
 * A process that ends by itself ends first (the timer does not hold it). The exit status is then that of SIGKILL (137
 * in a shell), the only way out past a stuck thread; the outputs and run.json are already written.
 */
export function endDespiteStuckThreads(threadsGivenUp: number, { afterMs = 10_000, say = (m: string) => process.stderr.write(m) } = {}): void {
  if (threadsGivenUp === 0) return;
  setTimeout(() => {
    say(`quern: ${threadsGivenUp} worker thread${threadsGivenUp === 1 ? '' : 's'} given up for making no progress ${threadsGivenUp === 1 ? 'is' : 'are'} still waiting on storage `
      + `${afterMs / 1000} s after the run finished, which keeps the process from ending; ending it (the outputs and run.json are written)\n`);
    process.kill(process.pid, 'SIGKILL');
  }, afterMs).unref();
}
