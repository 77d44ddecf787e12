// Opening a run: the storage watched, the worker pool opened (its first thread started early on a first run), the
// declarations read and checked, and the output folder's lock taken; a failure on the way closes what was opened.
import { existsSync, writeSync } from 'node:fs';
import { join } from 'node:path';
import { loadSpec, readArchiveDeclaration } from './declare/declare.js';
import { quantityUses } from './declare/quantity-uses.js';
import { leftLock, lockPath, OutputInUse, takeLock } from './outputs/lock.js';
import { afterProgress, type Progress } from './outputs/progress.js';
import { markShardStart, shardStartPath } from './outputs/shard-start.js';
import { writing } from './outputs/staged.js';
import { reservedColumnNames } from './outputs/output-tables.js';
import { removeOwnTemporaries } from './outputs/sweep-leftovers.js';
import { openPool } from './reduce/pool.js';
import { watchStorage } from './reduce/storage-watch.js';
import { refuseHidingRecordings } from './select/scan.js';
import type { Shard } from './select/select.js';
import { trendOptions } from './trends/options.js';
import { removeOwnSpools } from '../stages/read/mat-spool.js';
import { reduceCommand } from './rerun-command.js';
import { followed, stopOnSignal, type OutputsStand, type SignalStop, type StopTell } from './stop-on-signal.js';

export interface OpenOptions {
  jobs?: number;
  force?: boolean;
  spec?: string | null;
  shard: Shard | null;
  since?: number | null;
  until?: number | null;
  staleLockAfterMs?: number;
  storageMs?: number;
  /** Says why the run stopped, with its exit code and an error's stack (a plain line, or a JSON event with --log json). */
  tell?: StopTell;
  /** The run's progress on standard error, stopped before the signal's or the storage limit's line. */
  progress?: Pick<Progress, 'stop'>;
  /** Told where the outputs stand at every step, so that the command's own lines after the run (or its failure's) say it truly. */
  stand?: (stand: OutputsStand) => void;
  /** The command that runs this again, as given on the command line, quoted for a shell (`reduceCommand`). */
  command?: string;
}

/** The stopped run's line on standard error, as every other `quern:` line, with an error's stack after it. */
const plainLine: StopTell = (message, _code, details) => { process.stderr.write(`quern: ${message}\n${details?.stack ? `${details.stack}\n` : ''}`); };

/** What the lock says is running: the command as given (`command`), or else as the options opening the run say it, the period in UTC. */
const lockCommand = (root: string, outDir: string, o: OpenOptions): string =>
  o.command ?? reduceCommand(root, { out: outDir, spec: o.spec, jobs: o.jobs, force: o.force, shard: o.shard, since: o.since, until: o.until });

/** Opens the run on `root` into `outDir`; the caller ends it with `stop.off()`, `lock.release()`, `pool.destroy()` and `storage.stop()`. */
export async function openRun(root: string, outDir: string, runId: string, o: OpenOptions) {
  // Storage that stops answering ends the run rather than hold its lock for ever.
  const storage = watchStorage([root, outDir], o.storageMs ?? 5 * 60_000, o.progress ? { say: afterProgress(o.progress, (m: string) => { writeSync(2, m); }) } : {});
  const pool = openPool(o.jobs);
  // A first run into an output folder reduces and writes, so its first thread starts now, loading its modules while this
  // thread reads the declarations and scans (a quarter of a second of a small run's start); later runs start them on demand.
  const firstRun = !existsSync(join(outDir, 'cache'));
  // Waiting for the pool's code here (tens of ms) lets the thread start before the declarations are read, not after.
  if (firstRun) await pool.prestart(1);
  let stop: SignalStop | null = null;
  try {
    const spec = await loadSpec(root, o.spec);
    // A group holding a problem is kept as broken (its recordings fail with it); a problem outside the groups stops the run here.
    const declaration = await readArchiveDeclaration(root, reservedColumnNames(spec.spec), quantityUses(spec.spec));
    const trends = trendOptions(spec.spec); // checked now, before any work
    await refuseHidingRecordings(root, outDir, declaration);
    const command = lockCommand(root, outDir, o);
    // A signal, or an error nothing waits for, from here on: this run's temporary files and its lock go with it. The stop
    // is set before the lock is taken, and the lock's release handed to it as the lock file is created, so no moment
    // between the two leaves the lock behind.
    let releaseLock = () => {};
    stop = followed(stopOnSignal(() => { removeOwnTemporaries(outDir, o.shard); removeOwnSpools(); releaseLock(); }, o.progress ? afterProgress(o.progress, o.tell ?? plainLine) : o.tell ?? plainLine), o.stand);
    const lock = await takeLock(lockPath(outDir, o.shard), { run_id: runId, command }, { staleAfterMs: o.staleLockAfterMs, claimed: (release) => { releaseLock = release; } });
    const taken = stop;
    // Merge tells a shard that stopped part-way by this start, newer than the part it left.
    if (o.shard) await writing(shardStartPath(outDir, o.shard), () => markShardStart(outDir, o.shard!, { run_id: runId, command })).catch(async (e) => { await lock.release(); throw e; });
    return { storage, pool, firstRun, spec, declaration, trends, lock, stop: taken };
  } catch (e) {
    stop?.off();
    await pool.destroy();
    storage.stop();
    if (o.shard) await markFailedShard(outDir, o.shard, runId, lockCommand(root, outDir, o), e);
    throw e;
  }
}

/**
 * A shard that stopped before it took its lock keeps its start with why, so that merge names it rather than take its
 * earlier part. Not while another run of the shard holds the lock (that run keeps its own start), nor where the output
 * folder cannot be written (the merge cannot be either); the run's own error is the one told.
 */
async function markFailedShard(outDir: string, shard: Shard, runId: string, command: string, e: unknown): Promise<void> {
  if (e instanceof OutputInUse) return;
  const lock = lockPath(outDir, shard);
  if (existsSync(lock) && !(await leftLock(lock).catch(() => null))) return;
  const why = String((e as Error)?.message ?? e).split('\n')[0];
  await markShardStart(outDir, shard, { run_id: runId, command }, why).catch(() => {});
}
