// A run stopped while writing (a time limit's SIGKILL, the machine going down) leaves its staged files under hidden
// temporary names. The next run that holds the same lock removes those of the names it writes, so that they never pile
// up night after night beside the outputs.
import { readdirSync, rmSync } from 'node:fs';
import { readdir, rm } from 'node:fs/promises';
import { join } from 'node:path';
import { runsHere } from '../../stages/runs-here.js';

/** A staged or atomically written file's temporary name (staged.ts, atomic.ts, store.ts): `.<name>.<pid>[.<8 hex>].tmp`. */
// The shortest name that fits, so that a random part of digits alone is not read as the pid.
const TEMPORARY = /^\.(.+?)\.(\d+)(?:\.[0-9a-f]{8})?\.tmp$/;

/**
 * The folders of an output folder and which temporary names in them a lock holder owns: a whole run (or merge) owns the
 * folder's own files and the whole run's pack, shard K of N its parts and its pack. Other holders' files are left alone.
 */
export function ownedBy(shard: { k: number; n: number } | null): { folder: string; owns: (name: string) => boolean }[] {
  // A pack's scan mark (store.ts) goes with its pack.
  if (!shard) return [{ folder: '.', owns: () => true }, { folder: 'cache', owns: (name) => name === 'entries.pack' || name === 'entries.pack.scanned' || name === 'trends.json' || name === 'reported-changes.json' || name === 'reported-quality.json' }];
  const mine = `-${shard.k}-of-${shard.n}.`, pack = `entries-${shard.k}-of-${shard.n}.pack`;
  return [{ folder: 'parts', owns: (name) => name.includes(mine) }, { folder: 'cache', owns: (name) => name === pack || name === `${pack}.scanned` }];
}

/**
 * Removes the temporary files a stopped run left in `out` under the names this lock holder owns, and returns them
 * (relative to `out`). A file whose writer still runs on this host (a `quern export` beside the run) is left alone.
 */
export async function sweepLeftovers(out: string, shard: { k: number; n: number } | null, { runs = runsHere } = {}): Promise<string[]> {
  const removed: string[] = [];
  for (const { folder, owns } of ownedBy(shard)) {
    const names = await readdir(join(out, folder)).catch(() => [] as string[]);
    for (const name of names.sort()) {
      const m = TEMPORARY.exec(name);
      if (!m || !owns(m[1])) continue;
      const pid = Number(m[2]);
      if (pid === process.pid || runs(pid)) continue;
      // One that cannot be removed (permissions) stays for a later run; it never stops this one.
      if (await rm(join(out, folder, name), { force: true }).then(() => true, () => false)) removed.push(folder === '.' ? name : `${folder}/${name}`);
    }
  }
  return removed;
}

/**
 * Removes this process's own temporary files in `out` under the names this lock holder owns, at once (a run stopped by a
 * signal, before it ends: nothing else of the run may run in between), and returns them (relative to `out`).
 */
export function removeOwnTemporaries(out: string, shard: { k: number; n: number } | null): string[] {
  const removed: string[] = [];
  for (const { folder, owns } of ownedBy(shard)) {
    let names: string[] = [];
    try { names = readdirSync(join(out, folder)); } catch { continue; }
    for (const name of names.sort()) {
      const m = TEMPORARY.exec(name);
      if (!m || !owns(m[1]) || Number(m[2]) !== process.pid) continue;
      try { rmSync(join(out, folder, name), { force: true }); removed.push(folder === '.' ? name : `${folder}/${name}`); } catch { /* left for the next run */ }
    }
  }
  return removed;
}
