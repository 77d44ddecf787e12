// Checks that could not be made (severity ok, for want of a declaration or of a converter step): counted apart, so that ok
// is not read as checked on the terminal, in quality.json's totals and in quality.html.

/** A check not made on some channels: on how many, in which groups, and why (each distinct reason once). */
export interface NotAssessed { channels: number; groups: string[]; why: string[] }

/** Counts channels on which a check was not made into `into`. */
export function addNotAssessed(into: Record<string, NotAssessed>, name: string, more: NotAssessed): void {
  const n = (into[name] ??= { channels: 0, groups: [], why: [] });
  n.channels += more.channels;
  for (const g of more.groups) if (!n.groups.includes(g)) n.groups.push(g);
  for (const w of more.why) if (!n.why.includes(w)) n.why.push(w);
}

/** Groups named on a line of checks not made; the rest are counted. */
const GROUPS_NAMED = 5;

/** One line a check not made on some channels: which, on how many, in which groups, and what to do. */
export const notAssessedLines = (byFlag: Record<string, NotAssessed> | undefined): string[] => Object.entries(byFlag ?? {}).map(([name, n]) =>
  `${name} on ${n.channels} ${n.channels === 1 ? 'channel' : 'channels'} (${n.groups.length === 1 ? 'group' : 'groups'} ${n.groups.slice(0, GROUPS_NAMED).join(', ')}${n.groups.length > GROUPS_NAMED ? ` and ${n.groups.length - GROUPS_NAMED} more` : ''}): ${n.why.join('; ')}`);
