// Groups that get no recording: a pattern that matches no file, or one whose files all go to a group listed before it
// (a file belongs to the first group that matches), so they are reduced under that group's declaration instead.
import type { GroupDeclaration } from '../../spec/archive.js';
import { groupMatcher } from './scan.js';

/** A group with no recording, and the groups before it that take the files its pattern matches (none: it matches no file). */
export interface UnfedGroup { group: string; line: number | null; takenBy: { group: string; files: number }[] }

/** Groups no scanned file went to; only those are matched again, against the files the others took. */
export function unfedGroups(groups: readonly GroupDeclaration[], recordings: readonly { recording: string; group: number }[], lines: readonly number[] = []): UnfedGroup[] {
  const fed = new Uint32Array(groups.length);
  for (const r of recordings) fed[r.group]++;
  const out: UnfedGroup[] = [];
  groups.forEach((g, gi) => {
    if (fed[gi]) return;
    const matches = groupMatcher(g);
    const taken = new Map<number, number>();
    for (const r of recordings) if (matches(r.recording)) taken.set(r.group, (taken.get(r.group) ?? 0) + 1);
    out.push({ group: g.name, line: lines[gi] ?? null, takenBy: [...taken].sort((a, b) => a[0] - b[0]).map(([t, files]) => ({ group: groups[t].name, files })) });
  });
  return out;
}

/** The group's line as a check or a run says it; `broken`: the names of broken groups, whose files are set aside rather than reduced. */
export function unfedGroupNote(u: UnfedGroup, file = 'archive.yaml', broken: ReadonlySet<string> = new Set()): string {
  const where = u.line != null ? ` (${file} line ${u.line})` : '';
  if (!u.takenBy.length) return `group ${u.group}${where} matches no recording; check its match pattern against the archive's folders and names (letter case counts), or remove the group if its rig is retired`;
  const count = u.takenBy.reduce((s, t) => s + t.files, 0);
  const files = `its ${count === 1 ? 'file is' : `${count} files are`}`;
  const takers = u.takenBy.filter((t) => broken.has(t.group)).length;
  const one = u.takenBy.length === 1;
  // Each taker's fate where they differ: a broken one sets its files aside, the others reduce them.
  const taken = one ? `${files} taken by group ${u.takenBy[0].group}, listed before it`
    : takers === 0 || takers === u.takenBy.length ? `${files} taken by groups listed before it (${u.takenBy.map((t) => `${t.files} by ${t.group}`).join(', ')})`
    : `${files} taken by groups listed before it (${u.takenBy.map((t) => `${t.files} by ${t.group}, ${broken.has(t.group) ? 'set aside with its broken declaration until it is mended' : 'reduced under its declaration'}`).join('; ')})`;
  const fate = takers === 0 ? `, and reduced under ${one ? 'that declaration' : 'their declarations'}`
    : takers === u.takenBy.length ? `, and set aside with ${one ? 'that broken declaration until it is mended' : 'those broken declarations until they are mended'}` : '';
  return `group ${u.group}${where} matches no recording of its own: ${taken}${fate} (a file belongs to the first group that matches); list group ${u.group} first, or narrow the earlier group's match`;
}
