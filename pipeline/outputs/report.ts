// What a run did, for run.json and for the terminal.
import { join } from 'node:path';
import type { LoadedSpec } from '../declare/declare.js';
import { toolVersion } from '../declare/package-files.js';
import type { Decision } from '../plan/reuse.js';
import { lastCapture, quietWhy, type CaptureDue, type QuietGroup, type Shard } from '../select/select.js';
import { lateArrivalLines, type LateArrivals } from '../select/late-arrivals.js';
import { gapLines, type PeriodGap } from '../select/period-gap.js';
import { periodLine } from '../select/period-text.js';
import type { Damage } from '../store/pack.js';
import { cutShortLine, type PackCut } from '../store/pack-cut.js';
import type { EntryFacts } from '../store/record.js';
import { namesHolder, type TakenOver } from './lock.js';
import { brokenGroupLine, type BrokenGroup } from './broken-groups.js';
import type { Settling } from '../plan/settle.js';
import { qualitySummary, type QualitySummary } from './quality.js';
import { commitAll, jsonPieces, StagedFile } from './staged.js';
import { changesSummary } from '../trends/summary.js';
import { SECONDARY_TABLES } from './tables.js';
import { arrivalsLine, type Arrivals } from '../commands/arrivals.js';
import { recomputedLines, type RecomputedForBaselines } from '../trends/renew-baselines.js';
import { carriedLines, type RecomputedForHolds } from '../trends/carried-record.js';

export interface RunRecord {
  tool: 'quern';
  version: string;
  run_id: string;
  started: string;
  finished: string;
  archive: string;
  out: string;
  spec: { source: string; hash: string; value: unknown };
  counts: { scanned: number; selected: number; reduced: number; failed: number; unmatched: number; rows: number; recomputed: number; reused: number; settling: number };
  recordings: {
    recording: string; group: string; status: string; reason?: string; messages: string[]; rows: number; frames: number; sample_rate: number | null; seconds: number;
    /** Feature groups computed in this run and reused from earlier runs, and why. */
    recomputed: string[]; reused: string[]; why: string;
  }[];
  /** This run's shard (part files under parts/), or null for a whole run. */
  shard: Shard | null;
  /**
   * The period asked for with --since/--until (ms since the epoch), how many recordings fell in it, and the groups whose
   * recordings all start before it (absent from parts written before this was kept). With --since: the late arrivals, recordings
   * starting before the period that came in after the previous run, reduced for the trends' history unless --until bounds the run.
   * With --since alone (no --until, no shard): the stored recordings recomputed because they held baseline places stored under
   * another version, other options or another declaration (none: nothing was stale).
   */
  period: { since: number | null; until: number | null; selected: number; quiet_groups?: QuietGroup[]; capture_due?: CaptureDue[]; late_arrivals?: LateArrivals; gap?: PeriodGap; recomputed_for_baselines?: RecomputedForBaselines; recomputed_for_held_changes?: RecomputedForHolds } | null;
  /** Label columns and each group's labels, so that `quern merge` can assemble parts as one run would. */
  label_columns: string[];
  labels_by_group: Record<string, Record<string, string>>;
  unmatched: { path: string; reason: string }[];
  /**
   * What archive.yaml may have got wrong without stopping the run (a quantity near one the spec selects by, a unit its figures
   * cannot convert, a group whose files an earlier group takes), each on the terminal; and the groups that got no recording,
   * named here alone, since a retired group would be named every night (absent from parts written before this was kept).
   */
  declaration_notes?: string[];
  groups_without_recordings?: string[];
  /**
   * Groups of archive.yaml holding a problem (absent from parts written before this was kept): each claims its files, which
   * fail with its problems until it is mended, while the other groups are reduced.
   */
  broken_groups?: BrokenGroup[];
  /** Recordings modified within --settle before the scan (captures that may still be written): left to the next run. */
  settling: Settling[];
  /**
   * A shard's: the recordings of its share in the archive outside its period (neither in its lines nor settling), so that
   * `quern merge` holds the trends' history to the recordings present (absent from parts written before this was kept).
   */
  unselected?: { recording: string; group: string }[];
  /**
   * A shard's: the end of the starts its part holds (its scan's start, or --until before it), which `quern merge` keeps as
   * what its tables covered, for the next run's gap before its period (absent from parts written before this was kept).
   */
  covered_until?: string;
  /** Stored entries found damaged (bad checksum, cut short, unreadable): each recording concerned was recomputed. */
  /** Packs shorter than the run that last wrote them left them (a truncated copy): where each ends now, and what was lost past it. */
  store: { damaged: { file: string; offset: number; bytes: number; recording: string | null; problem: string }[]; cut_short: PackCut[]; compacted: boolean };
  /** Whether the tables and reports were rewritten, or already said what this run would write (same digest). */
  outputs: { rewritten: boolean; digest: string; written_by_run: string };
  /** A lock left by a run that is gone, and taken over by this one; the files such a run left half-written, removed (relative to the output folder). */
  lock: { took_over: TakenOver | null; leftovers_removed: string[] };
  timings: { scan_s: number; reduce_s: number; write_s: number; total_s: number };
  /**
   * quern merge's: the shards merged, and the recordings that came into the archive while they ran (found by a shard that
   * scanned later, not by the shard whose share they are), absent from the tables until the next run; null when none.
   */
  merged?: { shards: number; arrived_during_shards: Arrivals | null };
}

export type RunLine = RunRecord['recordings'][number];

/** A recording's line of run.json, from its stored facts (notes of the groups the spec asks for now), its group's present name and what this run did. */
const NO_MESSAGES: string[] = [];

export function runLine(f: EntryFacts, group: string, d: Pick<Decision, 'compute' | 'reused' | 'why'>, activeGroups: string[]): RunLine {
  let messages = [...(f.notes[''] ?? []), ...activeGroups.filter((g) => g in f.groupKeys).sort().flatMap((g) => f.notes[g] ?? [])];
  if (!messages.length) messages = NO_MESSAGES;
  return {
    recording: f.recording, group, status: f.status, ...(f.reason ? { reason: f.reason } : {}), messages,
    rows: f.status === 'reduced' ? f.channels : 0, frames: f.frames, sample_rate: f.sampleRate, seconds: round(f.seconds),
    recomputed: d.compute, reused: d.reused, why: d.why,
  };
}

export interface RunFacts {
  runId: string; started: Date; archive: string; out: string; spec: LoadedSpec; scanned: number; unmatched: string[];
  lines: RunLine[]; settling: Settling[]; declarationNotes: string[]; groupsWithoutRecordings: string[]; brokenGroups: BrokenGroup[]; unselected?: RunRecord['unselected']; coveredUntil?: string; timings: { scan_s: number; reduce_s: number; write_s: number };
  shard: Shard | null; labels: string[]; labelsByGroup: Record<string, Record<string, string>>;
  period: RunRecord['period']; damage: Damage[]; cutShort: PackCut[]; compacted: boolean; outputs: RunRecord['outputs']; tookOver: TakenOver | null;
  /** Temporary files a stopped run left, removed before this run began. */
  leftovers: string[];
  merged?: RunRecord['merged'];
}

export function runRecord(f: RunFacts): RunRecord {
  const finished = new Date();
  return {
    tool: 'quern', version: toolVersion, run_id: f.runId, started: f.started.toISOString(), finished: finished.toISOString(),
    archive: f.archive, out: f.out, spec: { source: f.spec.source, hash: f.spec.hash, value: f.spec.spec },
    counts: {
      scanned: f.scanned, selected: f.lines.length,
      recomputed: f.lines.filter((l) => l.recomputed.length > 0).length, reused: f.lines.filter((l) => l.recomputed.length === 0).length,
      reduced: f.lines.filter((l) => l.status === 'reduced').length, failed: f.lines.filter((l) => l.status === 'failed').length,
      unmatched: f.unmatched.length, rows: f.lines.reduce((s, l) => s + l.rows, 0), settling: f.settling.length,
    },
    ...(f.merged ? { merged: f.merged } : {}),
    recordings: f.lines,
    shard: f.shard, period: f.period, label_columns: f.labels, labels_by_group: f.labelsByGroup,
    unmatched: f.unmatched.map((path) => ({ path, reason: 'no group in archive.yaml matches this file; add a group for it, or move it out of the archive' })),
    declaration_notes: f.declarationNotes, groups_without_recordings: f.groupsWithoutRecordings, broken_groups: f.brokenGroups,
    settling: f.settling,
    ...(f.unselected ? { unselected: f.unselected } : {}),
    ...(f.coveredUntil ? { covered_until: f.coveredUntil } : {}),
    store: { damaged: f.damage.map((d) => ({ file: d.file, offset: d.offset, bytes: d.length, recording: d.recording, problem: d.problem })), cut_short: f.cutShort, compacted: f.compacted },
    outputs: f.outputs,
    lock: { took_over: f.tookOver, leftovers_removed: f.leftovers },
    timings: { ...mapValues(f.timings, round), total_s: round((finished.getTime() - f.started.getTime()) / 1000) },
  };
}

const round = (s: number) => Math.round(s * 1000) / 1000;
const mapValues = <T extends Record<string, number>>(o: T, fn: (v: number) => number) => Object.fromEntries(Object.entries(o).map(([k, v]) => [k, fn(v)])) as T;

/** Writes run.json (or a shard's part) item by item, staged and renamed into place. */
export async function writeRunRecord(out: string, name: string, r: RunRecord): Promise<void> {
  const file = new StagedFile(join(out, name));
  try {
    const { recordings, shard, period, label_columns, labels_by_group, unmatched, declaration_notes, groups_without_recordings, broken_groups, settling, unselected, store, outputs, lock, timings, ...before } = r;
    await file.write(jsonPieces.head(before, 'recordings'));
    for (const [i, line] of recordings.entries()) await file.write(jsonPieces.item(JSON.stringify(line, null, 2), i));
    await file.write(jsonPieces.tail(recordings.length, { shard, period, label_columns, labels_by_group, unmatched, declaration_notes, groups_without_recordings, ...(broken_groups ? { broken_groups } : {}), settling, ...(unselected ? { unselected } : {}), store, outputs, lock, timings }));
    await file.close();
    await commitAll([file]);
  } finally {
    await file.discard();
  }
}

/** Kinds of note the terminal names, the most frequent first; run.json holds every note. */
const NOTE_KINDS_SHOWN = 2;

/** The most frequent kinds of note, each as its first wording (to its first ';') and how many notes are of it. */
export function commonNotes(messages: string[], shown = NOTE_KINDS_SHOWN): string {
  // A kind is a note's text to its first ';', without the channel or stage it opens with and with its numbers masked, so
  // that one finding on many channels and recordings counts once.
  const kinds = new Map<string, { n: number; first: string; bare: string; opening: Set<string> }>();
  for (const m of messages) {
    const first = m.split(';')[0].trim(), opening = first.match(/^[^\s:]+: /)?.[0] ?? '', bare = first.slice(opening.length);
    const kind = bare.replace(/\d+(?:\.\d+)?/g, '#');
    const k = kinds.get(kind) ?? kinds.set(kind, { n: 0, first, bare, opening: new Set() }).get(kind)!;
    k.n++;
    k.opening.add(opening);
  }
  const top = [...kinds.values()].sort((a, b) => b.n - a.n).slice(0, shown);
  const clipped = (t: string) => (t.length > 90 ? `${t.slice(0, 89)}…` : t);
  // One channel's wording stands for the kind; where several channels share it, without the channel's name.
  return top.map((k) => `${k.n} such as "${clipped(k.opening.size > 1 ? k.bare : k.first)}"${k.opening.size > 1 ? ` (${k.opening.size} channels)` : ''}`).join(', ') + (kinds.size > shown ? `, and ${kinds.size - shown} other kind${kinds.size - shown === 1 ? '' : 's'}` : '');
}

/** Recordings left to settle that the terminal names; run.json lists them all. */
const MAX_SETTLING_LINES = 10;

/** Recordings this run reduced that failed: the period's, late arrivals reduced for the trends' history, and recordings recomputed for the baselines. */
export const failedOf = (r: RunRecord): number => r.counts.failed + (r.broken_groups ?? []).reduce((n, b) => n + b.recordings, 0) + (r.period?.late_arrivals?.failed ?? 0) + (r.period?.recomputed_for_baselines?.failed ?? 0) + (r.period?.recomputed_for_held_changes?.failed ?? 0);

/** The quiet groups a run's record tells: a shard sees only its share of the archive, so merge tells them for the whole of it. */
export const quietGroupsOf = (r: RunRecord): QuietGroup[] => (r.shard ? [] : r.period?.quiet_groups ?? []);

/** The end-of-run summary a person reads on the terminal. */
export function summaryText(r: RunRecord, q: QualitySummary): string {
  const lines = [
    `quern ${r.version}: ${r.counts.reduced} of ${r.counts.selected} recordings reduced (${r.counts.rows} channel rows) in ${r.timings.total_s.toFixed(1)} s; ${r.counts.failed} failed, ${r.counts.unmatched} unmatched${r.counts.settling ? `, ${r.counts.settling} left to settle` : ''}; ${r.counts.recomputed} computed${r.merged ? ' by the shards' : ''}, ${r.counts.reused} reused whole${r.shard ? `; shard ${r.shard.k} of ${r.shard.n}` : ''}${r.merged ? `; merged from ${r.merged.shards} ${r.merged.shards === 1 ? 'shard' : 'shards'}` : ''}${r.counts.selected < r.counts.scanned && !r.shard ? `; ${r.counts.scanned} in the archive` : ''}.`,
  ];
  // The period's bounds in UTC, as the selection used them, before anything said of its recordings.
  if (r.period) lines.push(periodLine(r.period));
  if (r.merged?.arrived_during_shards) lines.push(arrivalsLine(r.merged.arrived_during_shards));
  // What changed leads: it is the machine's story; the data-quality lines follow.
  if (q.changes) lines.push(...changesSummary(q.changes));
  for (const f of r.recordings.filter((x) => x.status === 'failed')) lines.push(`  FAILED  ${f.recording}: ${f.reason}`);
  const noted = r.recordings.filter((x) => x.messages.length);
  if (noted.length) lines.push(`  notes   ${noted.reduce((s, x) => s + x.messages.length, 0)} notes on ${noted.length} recording${noted.length === 1 ? '' : 's'}: ${commonNotes(noted.flatMap((x) => x.messages))}; see run.json`);
  for (const u of r.unmatched) lines.push(`  UNMATCHED  ${u.path}: ${u.reason}`);
  for (const b of r.broken_groups ?? []) lines.push(`  DECLARED ${brokenGroupLine(b)}`);
  for (const n of r.declaration_notes ?? []) lines.push(`  DECLARED ${n}`);
  if (r.period?.late_arrivals) lines.push(...lateArrivalLines(r.period.late_arrivals));
  lines.push(...gapLines(r.period?.gap));
  if (r.period?.recomputed_for_baselines) lines.push(...recomputedLines(r.period.recomputed_for_baselines));
  if (r.period?.recomputed_for_held_changes) lines.push(...carriedLines(r.period.recomputed_for_held_changes));
  for (const g of quietGroupsOf(r)) lines.push(`  QUIET   group ${g.group}: ${quietWhy(g, 'this period')}; ${lastCapture(g)}`);
  const settling = r.settling;
  for (const w of settling.slice(0, MAX_SETTLING_LINES)) lines.push(`  SETTLING ${w.recording}: modified ${w.age_s.toFixed(0)} s before the scan (--settle), so it may still be written; left to the next run`);
  if (settling.length > MAX_SETTLING_LINES) lines.push(`  …        and ${settling.length - MAX_SETTLING_LINES} more recordings left to settle: see run.json`);
  if (r.lock.took_over) { const h = r.lock.took_over.holder; lines.push(`  lock:    took over the lock of a run that is gone (${namesHolder(h) ? `${h.host}, pid ${h.pid}, started ${h.started}` : 'its holder unreadable'}): ${r.lock.took_over.why}`); }
  const leftovers = r.lock.leftovers_removed;
  if (leftovers.length) lines.push(`  lock:    removed ${leftovers.length} file${leftovers.length === 1 ? '' : 's'} a stopped run left half-written under temporary names (${leftovers.slice(0, 3).join(', ')}${leftovers.length > 3 ? ', …: see run.json' : ''})`);
  for (const c of r.store.cut_short ?? []) lines.push(`  CUT SHORT ${cutShortLine(c)}`);
  for (const d of r.store.damaged) lines.push(`  DAMAGED stored entry${d.recording ? ` of ${d.recording}` : ''} in ${d.file} at byte ${d.offset}: ${d.problem}; ${d.recording ? 'recomputed' : 'passed over'}`);
  if (!r.outputs.rewritten) lines.push(`  outputs: unchanged (same digest as run ${r.outputs.written_by_run}); not rewritten, so quality.html's and quality.json's “new” marks are that run's; what is new tonight is told here`);
  lines.push(...qualitySummary(q));
  if (r.shard) lines.push(`  parts:   ${r.out}/parts/ (shard ${r.shard.k} of ${r.shard.n}); combine them with: quern merge ${r.out}`);
  else lines.push(`  table:   ${r.out}/features.parquet (and ${[...Object.keys(SECONDARY_TABLES), ...(q.changes ? ['trends'] : []), ...((r.spec.value as { spectrum?: unknown }).spectrum ? ['spectra'] : [])].map((t) => `${t}.parquet`).join(', ')})`, `  quality: ${r.out}/quality.html (and quality.json)`, `  run:     ${r.out}/run.json`);
  return lines.join('\n');
}
