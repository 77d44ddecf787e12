// The period a run selected, as the terminal announces it: its bounds resolved to instants in UTC, so a span such as 1d or
// a date-time read on a machine in another zone shows exactly which starts it took.

/** An instant in ISO 8601 UTC, whole seconds without a fraction: 2026-11-16T00:00:00Z. */
export const utcText = (ms: number) => new Date(ms).toISOString().replace(/\.000Z$/, 'Z');

/** "  period:  from 2026-11-16T00:00:00Z until 2026-11-17T00:00:00Z (UTC; a start at the end is left out): 3 recordings start in it" */
export function periodLine(p: { since: number | null; until: number | null; selected: number }): string {
  const bounds = [p.since != null ? `from ${utcText(p.since)}` : '', p.until != null ? `until ${utcText(p.until)}` : ''].filter(Boolean).join(' ');
  const edge = p.until != null ? 'UTC; a start at the end is left out' : 'UTC';
  return `  period:  ${bounds} (${edge}): ${p.selected} ${p.selected === 1 ? 'recording starts' : 'recordings start'} in it`;
}
