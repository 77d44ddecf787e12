// Checks that could not be made (severity ok, for want of a declaration or of a converter step): counted apart, so that ok
// is not read as checked on the terminal, in quality.json's totals and in quality.html.

/** One reason a check was not made: on how many channels and in which groups. */
export interface NotAssessedReason { why: string; channels: number; groups: string[] }

/**
 * A check not made on some channels: on how many, in which groups, and why (each distinct reason once); `reasons` keeps
 * each reason with the channels and groups it applies to, since what one group must declare another may already have.
 */
export interface NotAssessed { channels: number; groups: string[]; why: string[]; reasons?: NotAssessedReason[] }

/** Groups in name order, so that a line reads the same whatever order the recordings were reduced in. */
const addGroups = (into: string[], more: readonly string[]) => { for (const g of more) if (!into.includes(g)) into.push(g); into.sort(); };

/** Totals kept before reasons were: their reasons stay joined, over all their groups. */
const reasonsOf = (n: NotAssessed): NotAssessedReason[] => n.reasons ?? (n.why.length ? [{ why: n.why.join('; '), channels: n.channels, groups: n.groups }] : []);

/** Counts channels on which a check was not made into `into`. */
export function addNotAssessed(into: Record<string, NotAssessed>, name: string, more: NotAssessed): void {
  const n = (into[name] ??= { channels: 0, groups: [], why: [], reasons: [] });
  n.channels += more.channels;
  addGroups(n.groups, more.groups);
  for (const w of more.why) if (!n.why.includes(w)) n.why.push(w);
  const reasons = (n.reasons ??= []);
  for (const r of reasonsOf(more)) {
    const same = reasons.find((x) => x.why === r.why);
    if (same) { same.channels += r.channels; addGroups(same.groups, r.groups); } else reasons.push({ why: r.why, channels: r.channels, groups: [...r.groups].sort() });
  }
}

/** Groups named on a line of checks not made (for each reason); the rest are counted. */
const GROUPS_NAMED = 5;

const groupsText = (groups: readonly string[]) =>
  `${groups.length === 1 ? 'group' : 'groups'} ${groups.slice(0, GROUPS_NAMED).join(', ')}${groups.length > GROUPS_NAMED ? ` and ${groups.length - GROUPS_NAMED} more` : ''}`;

/** One line a check not made on some channels: which, on how many, and what to do with the groups each reason applies to. */
export const notAssessedLines = (byFlag: Record<string, NotAssessed> | undefined): string[] => Object.entries(byFlag ?? {}).map(([name, n]) => {
  const reasons = reasonsOf(n);
  const counted = `${name} on ${n.channels} ${n.channels === 1 ? 'channel' : 'channels'}`;
  return reasons.length === 1
    ? `${counted} (${groupsText(n.groups)}): ${reasons[0].why}`
    : `${counted}: ${reasons.map((r) => `${groupsText(r.groups)}: ${r.why}`).join('; ')}`;
});
