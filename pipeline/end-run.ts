// A run's ending: every closing step (threads stopped, copies swept, store closed, lock released) runs whatever the others
// do, so that a failure on the way out never leaves the lock behind nor hides why the run stopped.

/**
 * Runs `steps` in order, each whatever the ones before it did. A step's failure is thrown once all have run, unless the
 * run had already failed (`failed`): its own error is the one to tell, not what closing after it met.
 */
export async function endRun(steps: (() => unknown)[], failed: boolean): Promise<void> {
  let first: { error: unknown } | null = null;
  for (const step of steps) {
    try { await step(); } catch (e) { first ??= { error: e }; }
  }
  if (first && !failed) throw first.error;
}
