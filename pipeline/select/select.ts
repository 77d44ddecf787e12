// Which recordings a run takes: a stable share of them for one shard, and those whose start falls in a period.
import pLimit from 'p-limit';
import type { GroupDeclaration } from '../../spec/archive.js';
import type { ScannedRecording } from './scan.js';
import { readerOptionsOf } from '../plan/plan.js';
import { isoTimeMs } from '../../stages/read/iso-time.js';

/** Stable shard of a recording, 1…n, from a hash of its path (FNV-1a, 32 bits): the same on every machine and run. */
export function shardOf(recording: string, n: number): number {
  let h = 0x811c9dc5;
  for (const ch of Buffer.from(recording, 'utf8')) { h ^= ch; h = Math.imul(h, 0x01000193) >>> 0; }
  return (h % n) + 1;
}

export interface Shard { k: number; n: number }

/** "K/N" (1 ≤ K ≤ N), or "auto": Slurm job arrays (SLURM_ARRAY_TASK_ID, _MIN, _COUNT) or Kubernetes indexed jobs (JOB_COMPLETION_INDEX with QUERN_SHARD_COUNT). */
export function parseShard(text: string, env: NodeJS.ProcessEnv = process.env): Shard {
  if (text === 'auto') {
    if (env.SLURM_ARRAY_TASK_ID != null && env.SLURM_ARRAY_TASK_COUNT != null) {
      return check(Number(env.SLURM_ARRAY_TASK_ID) - Number(env.SLURM_ARRAY_TASK_MIN ?? 0) + 1, Number(env.SLURM_ARRAY_TASK_COUNT), 'Slurm array variables');
    }
    if (env.JOB_COMPLETION_INDEX != null) {
      if (env.QUERN_SHARD_COUNT == null) throw new Error('--shard auto in a Kubernetes indexed job needs QUERN_SHARD_COUNT set to the job\'s completions');
      return check(Number(env.JOB_COMPLETION_INDEX) + 1, Number(env.QUERN_SHARD_COUNT), 'JOB_COMPLETION_INDEX and QUERN_SHARD_COUNT');
    }
    throw new Error('--shard auto found no scheduler variables (SLURM_ARRAY_TASK_ID with SLURM_ARRAY_TASK_COUNT, or JOB_COMPLETION_INDEX with QUERN_SHARD_COUNT); give --shard K/N');
  }
  const m = text.match(/^(\d+)\/(\d+)$/);
  if (!m) throw new Error(`--shard takes K/N (e.g. 2/8) or auto, got "${text}"`);
  return check(Number(m[1]), Number(m[2]), `--shard ${text}`);
}

function check(k: number, n: number, from: string): Shard {
  if (!(Number.isInteger(k) && Number.isInteger(n) && n >= 1 && k >= 1 && k <= n)) throw new Error(`${from}: shard ${k} of ${n} does not exist; shards run from 1 to N`);
  return { k, n };
}

const SPAN = /^(\d+(?:\.\d+)?)\s*(s|m|h|d|w)$/;
const UNIT_MS = { s: 1_000, m: 60_000, h: 3_600_000, d: 86_400_000, w: 604_800_000 } as const;
/** ISO 8601 date, optionally with a time of day and a zone: 2026-11-16, 2026-11-16T02:00, 2026-11-16T02:00:30.5+01:00. */
const ISO_DATE = /^(\d{4})-(\d{2})-(\d{2})(?:[T ]\d{2}:\d{2}(?::\d{2}(?:\.\d+)?)?(?:Z|[+-]\d{2}:?\d{2})?)?$/;

/** A date or date-time (ISO 8601; UTC unless it names a zone, as every time quern reads), or a span back from now such as 7d, 12h, 30m, 2w. */
export function parseWhen(text: string, now = Date.now()): number {
  // A span already counts back from now, so a minus sign would count forward: say what to write instead.
  const negative = text.trim().match(/^-\s*(\d+(?:\.\d+)?\s*[mhdw])$/);
  if (negative) throw new Error(`"${text}" is not a span: a span counts back from now and has no sign; write ${negative[1]}`);
  const span = text.trim().match(SPAN);
  if (span) return now - Number(span[1]) * UNIT_MS[span[2] as keyof typeof UNIT_MS];
  // Only the documented forms pass; read as the files' times are, so a date-time without a zone is UTC, never the machine's zone.
  const t = ISO_DATE.test(text.trim()) ? isoTimeMs(text) : NaN;
  if (!Number.isFinite(t)) {
    throw new Error(`"${text}" is neither a date (2026-11-16, 2026-11-16T02:00Z) nor a span (7d, 12h, 30m, 2w)`);
  }
  return t;
}

/** The period [since, until) as given; one that holds no instant is a mistake, not a night with nothing to do. */
export function checkPeriod(since: number | null, until: number | null, sinceText?: string, untilText?: string): void {
  if (since != null && until != null && since >= until) throw new Error(`--since ${sinceText} is not before --until ${untilText}: no recording could be selected; ${since === until ? 'give a later --until (the period ends before the instant it names)' : 'swap them'}`);
}

/** A span such as 90s, 30m, 12h, 2d or 1w, in ms. */
export function parseSpan(text: string): number {
  const span = text.trim().match(SPAN);
  if (!span) throw new Error(`"${text}" is not a span (90s, 30m, 12h, 2d, 1w)`);
  return Number(span[1]) * UNIT_MS[span[2] as keyof typeof UNIT_MS];
}

// ---- selecting a period ----

/** What the output folder already knows of a recording's start (from its stored entry); valid while size and modification time match. */
export interface KnownStart { size: number; mtimeMs: number; start_ms: number }

/**
 * A recording's start: as known while the file is unchanged, else its header (bext, CSV date-time), also where the file then
 * fails (data cut short after a whole header), else its modification time.
 */
export async function startTimeOf(r: ScannedRecording, g: GroupDeclaration, known: KnownStart | undefined): Promise<number> {
  if (known && known.size === r.size && known.mtimeMs === r.mtimeMs) return known.start_ms;
  // The readers load only when a header is to be read: a run whose files' starts are all known loads none of them.
  const { openRecording } = await import('../../stages/read/open.js');
  const { RecordingError } = await import('../../stages/read/recording.js');
  try {
    const rec = await openRecording(r.path, { format: g.format, sampleRate: g.sample_rate, layout: g.layout, ...readerOptionsOf(g) });
    await rec.close();
    if (rec.startTime) return rec.startTime.getTime();
  } catch (e) {
    // The reduction reports the failure; a start its header gave before it still places it in its own period.
    if (e instanceof RecordingError && e.startTime) return e.startTime.getTime();
  }
  return r.mtimeMs;
}

/** A group whose rig may have stopped capturing, and its latest start (before the period's end, for a declared capture_every). */
/** latest_start is null only for a group that declares capture_every and has no recording at all. */
export interface QuietGroup { group: string; latest_start: string | null; /** The group's declared capture_every, which it went without a recording. */ capture_every?: string }

/** What a quiet group last did: its latest start, or that none of its recordings was found (a match that no longer matches). */
export const lastCapture = (g: QuietGroup) =>
  g.latest_start != null ? `its latest started ${g.latest_start} (a rig that stopped capturing, or captures not yet copied in)` : 'none of its recordings was found in the archive (a rig that never delivered, or a match pattern that no longer matches its files)';

/** Why a group is named quiet: its declared capture interval passed without a recording, or the period went by without one. */
export const quietWhy = (g: QuietGroup, period: string) =>
  g.capture_every ? `no recording of it started in the ${g.capture_every} before the end of ${period} (its capture_every)` : `none of its recordings starts in ${period}`;

/** For a group that declares capture_every: its latest start before the period's end and when a start was due, which a shard records for merge. */
export interface CaptureDue { group: string; latest_start: string | null; due: string; capture_every: string }

/** How many periods before this one a group's latest recording may lie and the group still count as quiet, not retired (ours). */
export const QUIET_LOOKBACK_PERIODS = 7;

/**
 * The recordings whose start falls in [since, until); `known` gives what earlier runs stored, so unchanged files' headers are
 * not read. `quiet`: a group that declares capture_every when none of its recordings started within that span before the
 * period's end (until, or now); any other group when its recordings all start before the period (none in it, none after
 * it), the latest within QUIET_LOOKBACK_PERIODS periods of its length before it: a group silent for longer has been
 * retired, not stopped last night. `due`: for each group that declares capture_every, what merge needs to judge it whole.
 * `starts`: each recording's start, in the order given (ms since the epoch).
 */
export async function byStartTime(recordings: ScannedRecording[], groups: GroupDeclaration[], known: (recording: string) => KnownStart | undefined, since: number, until: number, now = Date.now()): Promise<{ chosen: ScannedRecording[]; quiet: QuietGroup[]; due: CaptureDue[]; starts: number[] }> {
  const limit = pLimit(16);
  const starts = await Promise.all(recordings.map((r) => limit(() => startTimeOf(r, groups[r.group], known(r.recording)))));
  const chosen = recordings.filter((_, i) => starts[i] >= since && starts[i] < until);
  const end = Math.min(until, now);
  const latest = new Map<number, number>(), latestBeforeEnd = new Map<number, number>();
  recordings.forEach((r, i) => {
    latest.set(r.group, Math.max(latest.get(r.group) ?? -Infinity, starts[i]));
    if (starts[i] < end) latestBeforeEnd.set(r.group, Math.max(latestBeforeEnd.get(r.group) ?? -Infinity, starts[i]));
  });
  const recent = since - QUIET_LOOKBACK_PERIODS * (end - since);
  const iso = (t: number) => new Date(t).toISOString();
  const due = groups.flatMap((g, i) => (g.capture_every == null ? [] : [{ group: g.name, latest_start: latestBeforeEnd.has(i) ? iso(latestBeforeEnd.get(i)!) : null, due: iso(end - parseSpan(g.capture_every)), capture_every: g.capture_every }]));
  const quiet = [
    ...[...latest].filter(([g, t]) => groups[g].capture_every == null && t < since && t >= recent).map(([g, t]) => ({ group: groups[g].name, latest_start: iso(t) })),
    ...quietByCadence(due),
  ].sort((a, b) => a.group.localeCompare(b.group));
  return { chosen, quiet, due, starts };
}

/** The groups that went longer than their declared capture_every without a recording: a latest start before the one due, or none at all. */
export const quietByCadence = (due: CaptureDue[]): QuietGroup[] =>
  due.filter((d) => d.latest_start == null || d.latest_start < d.due).map((d) => ({ group: d.group, latest_start: d.latest_start, capture_every: d.capture_every }));
