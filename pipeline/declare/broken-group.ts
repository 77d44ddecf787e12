// A group of archive.yaml holding a problem: set aside rather than stopping the run. It still claims the files its pattern
// matches, so none is reduced under another group's declaration, and each of them fails with the group's problems.
import picomatch from 'picomatch';
import type { GroupDeclaration } from '../../spec/archive.js';
import type { Problem } from './yaml-file.js';

/** The index of the group a problem lies in (under groups[i]); -1 for one outside every group. */
export const groupOfProblem = (p: Problem): number => (p.at[0] === 'groups' && typeof p.at[1] === 'number' ? p.at[1] : -1);

/** A group's name, or its place (groups[2]) where the name cannot be read. */
export function groupName(g: unknown, index: number): string {
  const name = (g as { name?: unknown } | null)?.name;
  return typeof name === 'string' && name.length > 0 ? name : `groups[${index}]`;
}

/** A group's match patterns, when they can be read (a pattern or a list of them, none empty) and compiled; else null. */
export function readablePattern(g: unknown): string[] | null {
  const match = (g as { match?: unknown } | null)?.match;
  const patterns = typeof match === 'string' ? [match] : Array.isArray(match) ? match : null;
  if (!patterns?.length || !patterns.every((p) => typeof p === 'string' && p.length > 0)) return null;
  try {
    picomatch(patterns as string[]);
    return patterns as string[];
  } catch {
    return null; // a pattern picomatch cannot compile claims nothing it could be trusted with
  }
}

/** A broken group: its name and pattern, nothing else taken from a declaration that holds a problem. */
export const brokenGroup = (name: string, match: string[], problems: string[]): GroupDeclaration => ({
  name, match, format: null, sample_rate: null, labels: {}, layout: null, hdf5: null, mat: null, flac: null, channels: null, duration_s: null, capture_every: null, broken: problems,
});
