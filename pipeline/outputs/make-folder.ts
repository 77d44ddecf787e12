// The output folder, made level by level: Node's own recursive mkdir retries forever where a file system refuses a
// folder with "no such file" (as /proc does), and a path through a file deserves a message that says so.
import { mkdir, stat } from 'node:fs/promises';
import { dirname, resolve } from 'node:path';
import { UsageError } from '../declare/yaml-file.js';

const REASONS: Record<string, string> = { EACCES: 'permission denied', EPERM: 'operation not permitted', EROFS: 'read-only file system', ENOSPC: 'no space left on the device', ENOENT: 'the file system refuses it' };

/** Makes `path` and the folders above it that are missing; a path that cannot become a folder is a UsageError naming where and why. */
export async function makeFolder(path: string): Promise<void> {
  const missing: string[] = [];
  for (let at = resolve(path); ; at = dirname(at)) {
    const found = await stat(at).catch((e: NodeJS.ErrnoException) => (e.code === 'ENOENT' || e.code === 'ENOTDIR' ? null : Promise.reject(e)));
    if (found?.isDirectory()) break;
    if (found) throw new UsageError(`cannot make the output folder ${path}: ${at} is a file, not a folder; give an output folder (--out) that is, or can be made, a folder`);
    missing.push(at);
    if (dirname(at) === at) break;
  }
  for (const at of missing.reverse()) {
    await mkdir(at).catch((e: NodeJS.ErrnoException) => {
      if (e.code === 'EEXIST') return;
      throw new UsageError(`cannot make the output folder ${path}: ${REASONS[e.code ?? ''] ?? e.message} (${e.code}) at ${at}; give an output folder (--out) where this user can write`);
    });
  }
}
