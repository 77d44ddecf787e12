// Late arrivals not yet in any finished run's tables: a --since run reduces a late arrival for the trends' history but keeps
// it out of its period's tables, and no later period selects it. The marks carry such recordings (a bounded list, the rest
// counted) until a finished run's tables take them in (a run whose period holds their start, or one without --since), so every
// --since run until then names them. Each mark's list is its writer's whole view as of its scan; the newest whole run's or
// merge's list stands, with the lists of shards that ran after it (a shard's part counts only once merged).

/** At most this many recordings are listed by key; the rest are counted with the stretch of their starts. */
export const MOST_LATE_LISTED = 1000;

/** Late arrivals in no finished run's tables as one writer saw them: each listed one's start, and the rest counted. */
export interface LateBook {
  /** When the writer's scan began: a shard's list counts only when newer than the whole runs' and merges'. */
  asOf: number;
  listed: Map<string, number>;
  unlisted: { count: number; from: number; to: number } | null;
}

export const emptyBook = (asOf = -Infinity): LateBook => ({ asOf, listed: new Map(), unlisted: null });

const msOf = (v: unknown) => (typeof v === 'string' ? Date.parse(v) : NaN);

/** The list a mark keeps under `late`, or null (none, or unreadable: it vouches for nothing, as a mark that cannot be read). */
export function readBook(mark: unknown): LateBook | null {
  const k = (mark as { late?: { as_of?: unknown; listed?: unknown; unlisted?: { count?: unknown; from?: unknown; to?: unknown } } } | null)?.late;
  const asOf = msOf(k?.as_of);
  if (!k || !Number.isFinite(asOf) || !Array.isArray(k.listed)) return null;
  const listed = new Map<string, number>();
  for (const e of k.listed) if (Array.isArray(e) && typeof e[0] === 'string' && Number.isFinite(msOf(e[1]))) listed.set(e[0], msOf(e[1]));
  const u = k.unlisted, count = Number(u?.count);
  const unlisted = u && count > 0 && Number.isFinite(msOf(u.from)) && Number.isFinite(msOf(u.to)) ? { count, from: msOf(u.from), to: msOf(u.to) } : null;
  return { asOf, listed, unlisted };
}

type Rest = LateBook['unlisted'];

/** Two counted rests over both stretches: `add` for rests apart, else the larger count (shards each carry the rest they read). */
function restOf(a: Rest, b: Rest, add: boolean): Rest {
  if (!a || !b) return a ?? b;
  return { count: add ? a.count + b.count : Math.max(a.count, b.count), from: Math.min(a.from, b.from), to: Math.max(a.to, b.to) };
}

/** Two views as one: every recording either lists, and the larger counted rest. */
const union = (a: LateBook, b: LateBook): LateBook => ({ asOf: Math.max(a.asOf, b.asOf), listed: new Map([...a.listed, ...b.listed]), unlisted: restOf(a.unlisted, b.unlisted, false) });

/** What the marks say now: the newest whole run's or merge's list, and the lists of shards that ran after it (null: none kept). */
export function standingBook(whole: readonly LateBook[], shards: readonly LateBook[]): LateBook | null {
  const newest = whole.reduce<LateBook | null>((n, b) => (n == null || b.asOf > n.asOf ? b : n), null);
  const after = shards.filter((b) => newest == null || b.asOf > newest.asOf);
  if (newest == null && !after.length) return null;
  return after.reduce((u, b) => union(u, b), newest ?? emptyBook());
}

/**
 * The list after a run as of `asOf`: the standing one with the late arrivals it named added, those gone from the archive
 * dropped (`startNow`: a recording's start now, undefined when gone; null when the run does not know), and, where the run's
 * tables are finished ones (a whole run, or a merge), those starting in [from, to) dropped: its tables hold them.
 */
export function bookAfter(standing: LateBook | null, named: readonly { recording: string; start: number }[], startNow: (recording: string) => number | undefined | null, asOf: number, tables: { from: number; to: number } | null): LateBook {
  const listed = new Map<string, number>();
  const taken = (t: number) => tables != null && t >= tables.from && t < tables.to;
  for (const [r, was] of standing?.listed ?? []) {
    const now = startNow(r);
    if (now === undefined) continue;
    const t = now ?? was;
    if (!taken(t)) listed.set(r, t);
  }
  for (const { recording, start } of named) if (!taken(start)) listed.set(recording, start);
  const u = standing?.unlisted ?? null;
  return { asOf, listed, unlisted: u && !(tables && tables.from <= u.from && u.to < tables.to) ? u : null };
}

const iso = (ms: number) => new Date(ms).toISOString();

/** The list as a mark keeps it: the earliest `most` starts by key, the rest counted with their stretch of starts. */
export function keptBook(b: LateBook, most = MOST_LATE_LISTED): { late: { as_of: string; listed: [string, string][]; unlisted?: { count: number; from: string; to: string } } } {
  const all = [...b.listed].sort((x, y) => x[1] - y[1] || (x[0] < y[0] ? -1 : 1));
  const over = all.slice(most);
  const rest = restOf(b.unlisted, over.length ? { count: over.length, from: over[0][1], to: over.at(-1)![1] } : null, true);
  return {
    late: {
      as_of: iso(b.asOf), listed: all.slice(0, most).map(([r, t]): [string, string] => [r, iso(t)]),
      ...(rest ? { unlisted: { count: rest.count, from: iso(rest.from), to: iso(rest.to) } } : {}),
    },
  };
}
