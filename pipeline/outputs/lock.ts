// One run at a time per output folder (or per shard's part of it): a lock file made with exclusive create, holding who
// runs. A second run refuses and names the holder; a lock whose holder is gone is taken over, and the run says so.
import { readFileSync, rmSync } from 'node:fs';
import { mkdir, open, readFile, readdir, readlink, rm, rmdir, stat, utimes } from 'node:fs/promises';
import { hostname } from 'node:os';
import { dirname, join } from 'node:path';
import { UsageError } from '../declare/yaml-file.js';
import { makeFolder } from './make-folder.js';
import { WriteFailed } from './staged.js';
import { runsHere } from '../../stages/runs-here.js';

/**
 * A process named for good on Linux: its boot's id and its start in clock ticks after that boot, and the pid namespace
 * its pid is counted in (`processIdentity`; older locks lack the namespace).
 */
export interface ProcessIdentity { boot: string; start_ticks: number; pid_namespace?: string }
export interface LockHolder { host: string; pid: number; started: string; run_id: string; command: string; process?: ProcessIdentity | null }
export interface TakenOver { holder: LockHolder; why: string }

/** Default age after which a lock held from another host counts as abandoned (its run refreshes it every minute). */
export const STALE_LOCK_AFTER_MS = 24 * 3_600_000;
const HEARTBEAT_MS = 60_000;
/** A lock from a container on this machine whose heartbeat has been silent this long is taken over. */
const SILENT_CONTAINER_MS = 10 * HEARTBEAT_MS;

export const lockPath = (out: string, shard: { k: number; n: number } | null) => (shard ? join(out, 'parts', `run-${shard.k}-of-${shard.n}.lock`) : join(out, 'run.lock'));

/** Whether a lock's content names its holder (host, pid, start): anything less cannot be checked, so counts as unreadable. */
export function namesHolder(h: unknown): h is LockHolder {
  const x = h as Partial<LockHolder> | null;
  return typeof x?.host === 'string' && x.host !== '' && Number.isInteger(x.pid) && x.pid! > 0 && typeof x.started === 'string' && x.started !== '';
}

/** The holder in words; what it does and its run id only when the lock says them. */
const describe = (h: LockHolder) => {
  const what = [h.command, h.run_id != null ? `run ${h.run_id}` : null].filter((w) => w != null && w !== '');
  return `host ${h.host}, pid ${h.pid}, started ${h.started}${what.length ? ` (${what.join(', ')})` : ''}`;
};

/**
 * Which process a pid names on this host, where Linux's /proc tells: the boot (its random id, new at every start of the
 * system) and the process's start in clock ticks after that boot (field 22 of /proc/PID/stat). Together they name one
 * process for good, where a pid alone is given again once its process has ended; null where there is no /proc.
 */
async function processIdentity(pid: number): Promise<ProcessIdentity | null> {
  try {
    const stat = await readFile(`/proc/${pid}/stat`, 'utf8');
    // The program's name, in parentheses, may hold spaces; the fields after it start at field 3.
    const ticks = stat.slice(stat.lastIndexOf(')') + 2).split(' ')[22 - 3];
    const boot = (await readFile('/proc/sys/kernel/random/boot_id', 'utf8')).trim();
    if (!/^\d+$/.test(ticks ?? '') || !boot) return null;
    const namespace = await pidNamespace(pid);
    return { boot, start_ticks: Number(ticks), ...(namespace ? { pid_namespace: namespace } : {}) };
  } catch {
    return null;
  }
}

/** The pid namespace a process counts pids in (`pid:[4026531836]`), or null where the system does not say (or lets not see). */
const pidNamespace = (pid: number) => readlink(`/proc/${pid}/ns/pid`).catch(() => null);

/** When this host's system started, ms since the epoch (from /proc/uptime), or null where there is no /proc. */
async function bootedAt(): Promise<number | null> {
  const up = Number((await readFile('/proc/uptime', 'utf8').catch(() => '')).split(' ')[0]);
  return up > 0 ? Date.now() - up * 1000 : null;
}

/** Whether a lock's process field names a process (a lock without one, or with anything else, is judged by its pid alone). */
const namesProcess = (p: unknown): p is ProcessIdentity =>
  typeof (p as ProcessIdentity | null)?.boot === 'string' && (p as ProcessIdentity).boot !== '' && Number.isSafeInteger((p as ProcessIdentity).start_ticks);

/**
 * Why the lock's holder is gone (`why`, null while it may still be running), and, when its pid means nothing here, where
 * it runs (`elsewhere`, for the refusal's message).
 */
async function staleness(path: string, h: LockHolder | null, staleAfterMs: number): Promise<{ why: string | null; elsewhere: string | null }> {
  const refreshedAt = async () => (await stat(path).catch(() => null))?.mtimeMs;
  const held = h && namesProcess(h.process) ? h.process : null;
  const here = held ? await processIdentity(process.pid) : null;
  const sameBoot = held != null && here != null && held.boot === here.boot;
  // Unknown (null) where either lock or system does not say.
  const sameNamespace = held?.pid_namespace != null && here?.pid_namespace != null ? held.pid_namespace === here.pid_namespace : null;
  // A pid counts only on its machine (its boot) and in its pid namespace. Under this host's name that is taken for granted
  // where the lock does not say otherwise; under another name only where it says so.
  const pidsCount = h != null && (h.host === hostname() ? !held || !here || (sameBoot && sameNamespace !== false) : sameBoot && sameNamespace === true);
  if (h && pidsCount) {
    if (!runsHere(h.pid)) return { why: `process ${h.pid} on this host is no longer running`, elsewhere: null };
    // A pid that runs may have been given again: after a restart of the system, or once the holder ended.
    const now = held ? await processIdentity(h.pid) : null;
    if (held && now && now.start_ticks !== held.start_ticks) return { why: `pid ${h.pid} on this host now names another program than the one that took the lock (it started later)`, elsewhere: null };
    return { why: null, elsewhere: null };
  }
  const refreshed = await refreshedAt();
  if (h && sameBoot) {
    // Another pid namespace of this boot: a container on this machine, whose heartbeat is read on this machine's own clock.
    // One silent for ten beats is gone (a container stopped or restarted), without waiting for --stale-lock-after.
    const elsewhere = 'in a container on this machine (another pid namespace)';
    if (refreshed != null && Date.now() - refreshed > SILENT_CONTAINER_MS) {
      return { why: `held ${elsewhere} and not refreshed for ${((Date.now() - refreshed) / 60_000).toFixed(0)} min (over ${SILENT_CONTAINER_MS / 60_000} min; its run refreshes it every minute)`, elsewhere };
    }
    return { why: null, elsewhere };
  }
  let elsewhere: string | null = null;
  if (h && held && here && h.host === hostname()) {
    // Another boot under this host's name: this host restarted since, or another machine that has the same name took it.
    const booted = await bootedAt();
    // A minute's slack: the boot time is read from a clock, and the heartbeat comes once a minute.
    if (refreshed != null && booted != null && refreshed < booted - HEARTBEAT_MS) return { why: 'this host has restarted since the lock was last refreshed', elsewhere: null };
    elsewhere = "on another machine under this host's name (another boot)";
  }
  if (refreshed == null) return { why: null, elsewhere };
  // A lock left empty by a run stopped between creating and filling it.
  if (!h && Date.now() - refreshed > 10_000) return { why: 'the lock file is empty, unreadable or names no holder, and is over 10 s old', elsewhere: null };
  const ageH = (Date.now() - refreshed) / 3_600_000;
  const from = h ? `held from host ${h.host}${elsewhere ? ` ${elsewhere}` : ''}` : 'unreadable';
  const why = Date.now() - refreshed > staleAfterMs ? `${from} and not refreshed for ${ageH.toFixed(1)} h (over ${(staleAfterMs / 3_600_000).toFixed(1)} h)` : null;
  return { why, elsewhere };
}

const readHolder = async (path: string): Promise<LockHolder | null> => {
  try { const h: unknown = JSON.parse(await readFile(path, 'utf8')); return namesHolder(h) ? h : null; } catch { return null; }
};

export class OutputInUse extends UsageError {}

/** A lock taken; `release` removes it at once (only while it is still this run's). */
export interface Lock { path: string; tookOver: TakenOver | null; release(): void }

/**
 * Takes the lock at `path` for `me`. Taking over a stale lock happens under a short-lived mutex folder, so two runs
 * that find the same stale lock do not both take it. `claimed` is handed the lock's release the moment the file is
 * created, before it is filled, so that a stop on a signal set up before the lock is taken removes it however soon it comes.
 */
export async function takeLock(path: string, me: Omit<LockHolder, 'host' | 'pid' | 'started' | 'process'>, { staleAfterMs = STALE_LOCK_AFTER_MS, claimed }: { staleAfterMs?: number; claimed?: (release: () => void) => void } = {}): Promise<Lock> {
  await makeFolder(dirname(path));
  const holder: LockHolder = { host: hostname(), pid: process.pid, started: new Date().toISOString(), ...me, process: await processIdentity(process.pid) };
  const text = JSON.stringify(holder, null, 2) + '\n';
  let beat: ReturnType<typeof setInterval> | undefined;
  // At once, so that a run stopped by a signal releases it before it exits (stop-on-signal.ts); while it is being filled
  // its text is a beginning of this run's.
  const release = () => {
    clearInterval(beat);
    try { const now = readFileSync(path, 'utf8'); if (now === text || (now.length < text.length && text.startsWith(now))) rmSync(path, { force: true }); } catch { /* already gone */ }
  };
  let tookOver: TakenOver | null = null;
  for (let attempt = 0; ; attempt++) {
    try {
      const fh = await open(path, 'wx');
      claimed?.(release);
      try { await fh.writeFile(text); } finally { await fh.close(); }
      break;
    } catch (e) {
      // A folder the run may not write into (read-only, another user's) is named as such, not reported as quern's own error.
      if ((e as NodeJS.ErrnoException).code !== 'EEXIST') throw new WriteFailed(path, e);
    }
    const held = await readHolder(path);
    const { why, elsewhere } = await staleness(path, held, staleAfterMs);
    if (!why || attempt > 3) {
      // A holder that still runs but has stopped refreshing its lock is stuck (storage that stopped answering, a SIGSTOP):
      // deleting the lock would let it write beside the next run should it wake, so ending it is the way on.
      const silentMs = Date.now() - ((await stat(path).catch(() => null))?.mtimeMs ?? Date.now());
      const here = held != null && !elsewhere && held.host === hostname();
      // On this host a holder that has gone is seen and its lock taken over; another host's can only be judged by its silence.
      const stuck = here && silentMs > SILENT_CONTAINER_MS
        ? `. It has not refreshed the lock for ${(silentMs / 60_000).toFixed(0)} min (a run refreshes it every minute), so it seems stuck: end it (kill -KILL ${held!.pid}) and the next run takes the lock over`
        : here || !held ? '. Wait for it to finish (should it end without removing its lock, the next run takes the lock over)'
          : `. Wait for it to finish; should that run have ended without removing its lock, the lock is taken over once it has not been refreshed for ${(staleAfterMs / 3_600_000).toPrecision(3).replace(/\.?0+$/, '')} h (--stale-lock-after), or delete the lock file once you know it has ended`;
      throw new OutputInUse(`${dirname(path)} is in use by another run: ${held ? describe(held) : 'the lock names no holder yet (a run may be starting; taken over once 10 s old)'}${elsewhere ? `, ${elsewhere}` : ''} (lock ${path})${stuck}`);
    }
    const mutex = `${path}.takeover`;
    try { await mkdir(mutex); } catch {
      // Another run is taking it over right now, or one died doing so long ago.
      if (Date.now() - ((await stat(mutex).catch(() => null))?.mtimeMs ?? Date.now()) > 60_000) await rmdir(mutex).catch(() => {});
      await new Promise((r) => setTimeout(r, 50));
      continue;
    }
    try {
      const again = await readHolder(path);
      if (JSON.stringify(again) === JSON.stringify(held)) {
        await rm(path, { force: true });
        tookOver = { holder: held ?? { host: '?', pid: 0, started: '?', run_id: '?', command: '?' }, why };
      }
    } finally {
      await rmdir(mutex).catch(() => {});
    }
  }
  beat = setInterval(() => { const t = new Date(); utimes(path, t, t).catch(() => {}); }, HEARTBEAT_MS);
  beat.unref();
  return { path, tookOver, release };
}

/** The shards of this folder whose runs still hold their lock (merge refuses while they run). */
export async function heldShardLocks(out: string): Promise<LockHolder[]> {
  const dir = join(out, 'parts');
  const held: LockHolder[] = [];
  for (const f of (await readdir(dir).catch(() => [] as string[])).filter((n) => /^run-\d+-of-\d+\.lock$/.test(n))) {
    const h = await readHolder(join(dir, f));
    if (!(await staleness(join(dir, f), h, STALE_LOCK_AFTER_MS)).why && h) held.push(h);
  }
  return held;
}

export const describeHolder = describe;

/**
 * A lock at `path` that no running holder keeps (a run killed, or its machine gone down): its holder (null when the file
 * names none) and why it is gone; null when there is no such lock, or its holder may still run.
 */
export async function leftLock(path: string, staleAfterMs = STALE_LOCK_AFTER_MS): Promise<{ holder: LockHolder | null; why: string } | null> {
  if (!(await stat(path).catch(() => null))) return null;
  const holder = await readHolder(path);
  const { why } = await staleness(path, holder, staleAfterMs);
  return why ? { holder, why } : null;
}
