// Whether a process still runs on this host, for what a stopped process left behind (a lock, temporary copies).
import { readFileSync } from 'node:fs';

/**
 * Whether a process of this pid runs on this host: signal 0 probes without sending anything (EPERM: it runs as someone
 * else). A killed process its parent has not collected yet still answers the probe, so on Linux its state in
 * /proc/PID/stat tells it apart: Z (zombie) or X (dead) runs no more.
 */
export function runsHere(pid: number): boolean {
  try { process.kill(pid, 0); } catch (e) { return (e as NodeJS.ErrnoException).code !== 'ESRCH'; }
  return !endedState(pid);
}

/**
 * Whether Linux's /proc says the process has ended but is not yet collected: the state, field 3 of /proc/PID/stat (after
 * the name in parentheses, which may hold spaces), is Z or X. False where /proc does not say (no /proc, or hidden).
 */
function endedState(pid: number): boolean {
  try {
    const stat = readFileSync(`/proc/${pid}/stat`, 'utf8');
    const state = stat.slice(stat.lastIndexOf(')') + 2, stat.lastIndexOf(')') + 3);
    return state === 'Z' || state === 'X';
  } catch {
    return false;
  }
}
