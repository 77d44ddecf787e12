// The stretches of start times the finished runs of an output folder put in their tables: a run without --since covers
// every start before its scan, a --since run [since, its scan). Kept as their union with the first run's since (the floor),
// so that a stretch above the floor no finished run covered (a night whose run failed) stays uncovered until a run's period
// takes it in, however many nights pass; what lies below the floor no run was asked for, and is no gap.

/** Starts in [from, to) (ms since the epoch); `from` -Infinity: every start before `to`. */
export interface Stretch { from: number; to: number }

/** A stretch as a scan mark keeps it: ISO 8601 bounds, null for a start without bound. */
export type KeptStretch = [string | null, string];

/** What the finished runs covered: starts from `floor` on that no stretch holds are a gap. */
export interface Cover { floor: number; stretches: Stretch[] }

/** The cover after a finished run's tables took in [from, to): the floor stays where the first run set it (null: still none). */
export function coverWith(before: Cover | null, from: number, to: number): Cover | null {
  const stretches = withStretch(before?.stretches ?? [], from, to);
  return stretches.length ? { floor: before && before.stretches.length ? before.floor : from, stretches } : null;
}

/** Two covers as one (a whole run's and the merges'), or whichever there is. */
export function joinCovers(a: Cover | null, b: Cover | null): Cover | null {
  if (!a || !b) return a ?? b;
  return { floor: Math.min(a.floor, b.floor), stretches: b.stretches.reduce((u, s) => withStretch(u, s.from, s.to), a.stretches) };
}

/** Whether start `t` lies in a gap of `c`: at or above its floor and in no stretch. */
export const uncovered = (c: Cover, t: number): boolean => t >= c.floor && !covers(c.stretches, t);

/** The union of `stretches` and [from, to), sorted, overlapping or touching stretches joined. */
export function withStretch(stretches: readonly Stretch[], from: number, to: number): Stretch[] {
  const all = [...stretches, ...(to > from ? [{ from, to }] : [])].sort((a, b) => a.from - b.from);
  const joined: Stretch[] = [];
  for (const s of all) {
    const last = joined.at(-1);
    if (last && s.from <= last.to) last.to = Math.max(last.to, s.to);
    else joined.push({ ...s });
  }
  return joined;
}

/** Whether some stretch holds start `t`. */
export const covers = (stretches: readonly Stretch[], t: number): boolean => stretches.some((s) => t >= s.from && t < s.to);

/** The end of the last stretch that ends at or before `t` (where the cover before an uncovered start ended), or null. */
export function coverEndBefore(stretches: readonly Stretch[], t: number): number | null {
  const ends = stretches.filter((s) => s.to <= t).map((s) => s.to);
  return ends.length ? Math.max(...ends) : null;
}

const isoOrNull = (t: number) => (Number.isFinite(t) ? new Date(t).toISOString() : null);
const msOrOpen = (v: unknown) => (v === null ? -Infinity : typeof v === 'string' ? Date.parse(v) : NaN);

/** The cover as a mark keeps it: `covered_until` (where the last stretch ends), `covered_from` (the floor) and `covered`; none: nothing. */
export function keptCover(c: Cover | null): { covered_until?: string; covered_from?: string | null; covered?: KeptStretch[] } {
  if (!c) return {};
  return {
    covered_until: new Date(Math.max(...c.stretches.map((s) => s.to))).toISOString(),
    covered_from: isoOrNull(c.floor),
    covered: c.stretches.map((s): KeptStretch => [isoOrNull(s.from), new Date(s.to).toISOString()]),
  };
}

/**
 * The cover a mark kept, or null. A mark written before the stretches were kept gives every start before its
 * `covered_until` (`fallbackUntil`, its scan's start, when it has none); stretches that cannot be read vouch for nothing.
 */
export function readCover(mark: unknown, fallbackUntil?: unknown): Cover | null {
  const m = (mark ?? {}) as { covered?: unknown; covered_from?: unknown; covered_until?: unknown };
  const floor = msOrOpen(m.covered_from);
  if (Array.isArray(m.covered) && (Number.isFinite(floor) || floor === -Infinity)) {
    let stretches: Stretch[] = [];
    for (const k of m.covered) {
      const from = Array.isArray(k) ? msOrOpen(k[0]) : NaN, to = Array.isArray(k) ? msOrOpen(k[1]) : NaN;
      if ((Number.isFinite(from) || from === -Infinity) && Number.isFinite(to)) stretches = withStretch(stretches, from, to);
    }
    if (stretches.length) return { floor, stretches };
  }
  const until = [msOrOpen(m.covered_until), msOrOpen(fallbackUntil)].find(Number.isFinite);
  return until == null ? null : { floor: -Infinity, stretches: [{ from: -Infinity, to: until }] };
}
