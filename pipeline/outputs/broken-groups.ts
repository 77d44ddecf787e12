// The groups of archive.yaml a run set aside as broken, for run.json and one terminal line each.
import type { ArchiveDeclaration } from '../../spec/archive.js';

/** A broken group: where it starts in archive.yaml, its problems (file:line: key: what to do) and how many of the run's recordings it set aside. */
export interface BrokenGroup { group: string; line: number | null; problems: string[]; recordings: number }

/** The declaration's broken groups, each with the count of the run's recordings (`selected`, by group index) set aside with it. */
export function brokenGroupsOf(declaration: ArchiveDeclaration, selected: readonly { group: number }[]): BrokenGroup[] {
  const count = new Uint32Array(declaration.groups.length);
  for (const s of selected) count[s.group]++;
  return declaration.groups.flatMap((g, gi) => (g.broken ? [{ group: g.name, line: declaration.lines?.[gi] ?? null, problems: g.broken, recordings: count[gi] }] : []));
}

/** The group's terminal line: its problems once, and what became of its recordings. */
export function brokenGroupLine(b: BrokenGroup, file = 'archive.yaml'): string {
  const where = b.line != null ? ` (${file} line ${b.line})` : '';
  const which = b.recordings === 1 ? 'its 1 recording in this run is' : `its ${b.recordings} recordings in this run are`;
  return `group ${b.group}${where} is broken: ${b.problems.join(' | ')}; ${which} set aside (not reduced, stored results kept) until it is mended, and then reduced`;
}
