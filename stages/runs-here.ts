// Whether a process still runs on this host, for what a stopped process left behind (a lock, temporary copies).

/** Whether a process of this pid runs on this host: signal 0 probes without sending anything (EPERM: it runs as someone else). */
export function runsHere(pid: number): boolean {
  try { process.kill(pid, 0); return true; } catch (e) { return (e as NodeJS.ErrnoException).code !== 'ESRCH'; }
}
