// A run's period: the share's recordings starting in [since, until), the groups quiet over it, and the late arrivals
// before it (an older night copied in after the runs that covered its dates), decided with the period's; after deciding,
// the period's decisions apart from the late arrivals', which are reduced for the trends' history alone.
import type { GroupDeclaration } from '../../spec/archive.js';
import type { Decision } from '../plan/reuse.js';
import type { Store } from '../store/store.js';
import type { Cover } from './covered-stretches.js';
import { arrivalsBefore, lateArrivalsRecord } from './late-arrivals.js';
import { gapBefore, gapRecord } from './period-gap.js';
import type { LateBook } from './pending-late.js';
import type { ScannedRecording } from './scan.js';
import { byStartTime, type CaptureDue, type QuietGroup, type Shard } from './select.js';

/** One recording starting before the period, with its start (ms since the epoch). */
export interface Arrival { file: ScannedRecording; start: number }

export interface Period {
  since: number | null;
  until: number | null;
  /** The recordings in the period (the whole share without one). */
  chosen: ScannedRecording[];
  inPeriod: ReadonlySet<string>;
  quiet: QuietGroup[];
  due: CaptureDue[];
  /** Late arrivals found (only with --since). */
  arrived: Arrival[];
  /** Late arrivals earlier runs found that no finished run's tables hold yet, outside this period (only with --since). */
  earlier: Arrival[];
  /** The late arrivals in no finished run's tables as the marks say now (null: none said). */
  book: LateBook | null;
  /** Each recording's start where the run read them (with --since or --until). */
  startsNow: ReadonlyMap<string, number>;
  /** Recordings starting before `since` in a stretch no finished run before covered: in no period's tables (only with --since). */
  gap: { file: ScannedRecording; start: number }[];
  /** The stretches of starts the finished runs before put in the tables (null: none said). */
  cover: Cover | null;
  /** Late arrivals are reduced (no --until bounds the run); otherwise they are only named. */
  reduceLate: boolean;
  /** What the run decides: the period's recordings, and the late arrivals it reduces. */
  toDecide: ScannedRecording[];
}

/** The period of the share, by the starts the store knows (headers of unchanged files are not read again). */
export async function choosePeriod(share: ScannedRecording[], groups: GroupDeclaration[], store: Store, since: number | null = null, until: number | null = null): Promise<Period> {
  let chosen = share, starts: number[] = [];
  let quiet: QuietGroup[] = [], due: CaptureDue[] = [];
  if (since != null || until != null) ({ chosen, quiet, due, starts } = await byStartTime(share, groups, (r) => store.knownStart(r), since ?? -Infinity, until ?? Infinity));
  // Found from the starts just taken; without --until they are decided too, and reduced where that has work.
  const marks = await store.scanMarks();
  const arrived = since != null ? arrivalsBefore(share, starts, since, marks, (r) => store.get(r) != null) : [];
  const cover = since != null ? marks.cover : null;
  const inPeriod = new Set(chosen.map((r) => r.recording));
  // Named on every --since run until a finished run's tables take them in.
  const earlier: Arrival[] = [];
  if (since != null && marks.late) share.forEach((r, i) => { if (marks.late!.listed.has(r.recording) && !inPeriod.has(r.recording)) earlier.push({ file: r, start: starts[i] }); });
  const gap = since != null ? gapBefore(share, starts, since, cover) : [];
  const reduceLate = until == null;
  const toDecide = reduceLate && arrived.length ? [...chosen, ...arrived.map((l) => l.file)] : chosen;
  return { since, until, chosen, inPeriod, quiet, due, arrived, earlier, book: marks.late, startsNow: new Map(starts.map((t, i) => [share[i].recording, t])), gap, cover, reduceLate, toDecide };
}

/**
 * The decisions taken, split: the period's (its tables and lines), the late arrivals' with work to do (reduced and stored
 * beside them), and the late arrivals the run names: those reduced, or with --until those with no stored result.
 */
export function splitTaken(p: Period, taken: Decision[], stored: (recording: string) => boolean): { decisions: Decision[]; lateTaken: Decision[]; late: Arrival[] } {
  if (p.toDecide === p.chosen) return { decisions: taken, lateTaken: [], late: p.reduceLate ? [] : p.arrived.filter((l) => !stored(l.file.recording)) };
  const startOf = new Map(p.arrived.map((l) => [l.file.recording, l.start]));
  const lateTaken = taken.filter((d) => !p.inPeriod.has(d.recording) && d.stores);
  return { decisions: taken.filter((d) => p.inPeriod.has(d.recording)), lateTaken, late: lateTaken.map((d) => ({ file: d.file, start: startOf.get(d.recording)! })) };
}

/**
 * run.json's period (null without one): its bounds, how many it selected, the quiet groups, what a shard keeps for merge
 * to judge declared capture intervals whole, the late arrivals and what the baselines' renewal recomputed.
 */
export function periodRecord<R extends object>(p: Period, late: Arrival[], groupNames: readonly string[], shard: Shard | null, outcome: (recording: string) => { status: 'reduced' | 'failed'; reason?: string } | undefined, renewed?: R) {
  if (p.since == null && p.until == null) return null;
  return {
    since: p.since, until: p.until, selected: p.chosen.length, quiet_groups: p.quiet, ...(shard && p.due.length ? { capture_due: p.due } : {}),
    // Those left to settle are named there, and are late arrivals again for the next run.
    ...(p.since != null ? { late_arrivals: lateArrivalsRecord(late, groupNames, p.reduceLate, outcome, earlierOnly(p.earlier, late), p.book?.unlisted?.count ?? 0) } : {}),
    // Named by every --since run until a finished run's period takes it in: the marks keep the stretches the tables covered.
    ...(p.gap.length ? { gap: gapRecord(p.gap, p.cover, groupNames) } : {}),
    ...renewed,
  };
}

/** The late arrivals earlier runs found, but those this run names among its own. */
function earlierOnly(earlier: readonly Arrival[], late: readonly Arrival[]): Arrival[] {
  const named = new Set(late.map((l) => l.file.recording));
  return earlier.filter((l) => !named.has(l.file.recording));
}

/**
 * What the run saw and left without a stored result, kept for the next run's late arrivals; not those it leaves to a later
 * run (late arrivals named but not reduced under --until, captures left to settle), which must stay late.
 */
export function leftOutOfScan(share: readonly ScannedRecording[], stored: (recording: string) => boolean, p: Period, late: readonly Arrival[], settling: Iterable<string>): string[] {
  const notYet = new Set([...(p.reduceLate ? [] : late.map((l) => l.file.recording)), ...settling]);
  return share.filter((r) => !stored(r.recording) && !notYet.has(r.recording)).map((r) => r.recording);
}
