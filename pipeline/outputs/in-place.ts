// Where the output folder's own records (outputs.json, cache/trends.json) name its files: relative to the folder, so that
// a folder copied or moved elsewhere checks its own files, never those of the folder it was copied from.
import { stat } from 'node:fs/promises';
import { isAbsolute, join, normalize, relative, sep } from 'node:path';

/** A file of the output folder `out` as its records keep it: relative to `out`, with / separators. */
export const keptName = (out: string, path: string): string => relative(out, path).split(sep).join('/');

/**
 * The file a record names, inside `out`, or null when it lies elsewhere: a name kept relative (from this version on), or an
 * absolute one kept by earlier versions, which counts only while it lies in `out` itself (a copied folder's names the original's files).
 */
export function keptPath(out: string, name: string): string | null {
  const inside = isAbsolute(name) ? relative(out, name) : normalize(name.split('/').join(sep));
  if (inside === '' || inside === '.' || isAbsolute(inside) || inside === '..' || inside.startsWith(`..${sep}`)) return null;
  return join(out, inside);
}

/** True when every file the record names lies in `out` at the size it was written with. */
export async function filesInPlace(out: string, files: Record<string, number>): Promise<boolean> {
  for (const [name, size] of Object.entries(files)) {
    const path = keptPath(out, name);
    if (path == null || (await stat(path).catch(() => null))?.size !== size) return false;
  }
  return true;
}

/** The record's file list with each file named relative to `out`. */
export const keptFiles = (out: string, files: { path: string; size: number }[]): Record<string, number> =>
  Object.fromEntries(files.map((f) => [keptName(out, f.path), f.size]));
