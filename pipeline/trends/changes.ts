// Every watched feature of every recording scored against its channel's baseline, and what changed: the latest verdict of
// each channel feature this run covers, when it is not steady.
import type { Column, NumberColumn, TextColumn } from '../outputs/arrow-columns.js';
import { baselineOf, eraAt, erasOf, formedFromPeriodOnly, recordingsToCome, whyNotFormed, type BaselineStats, type Era } from './baseline.js';
import { failingFlags, severityAt, usable, type History, type Series } from './history.js';
import { causesOf, STALE_CAUSES, type StaleCauseName } from './stale-cause.js';
import { heldAcrossStale, type HeldAcrossStale } from './held-across-stale.js';
import { baselineText, limitsFor, namingNone, type TrendOptions, type WatchedFeature } from './options.js';
import { againstFloor, floorOf, type BelowFloor } from './floor.js';
import { changeKey } from './news.js';
import { medianAndMad } from './robust.js';
import { changeDb, robustScore } from './score.js';
import { heldVerdict, limitReached, nearness, verdictOf, VERDICTS, type Verdict } from './verdict.js';

export interface ScoredPoint {
  value: number;
  baseline: number | null;
  changeDb: number | null;
  score: number | null;
  verdict: Verdict | null;
  limit: 'warn' | 'alarm' | null;
  /** The verdict is held by the deadband: back inside its threshold, but not yet by the deadband. */
  held?: boolean;
  /** Present where the baseline's median or the value lies below its measurable floor: which, and the floor that bounds changeDb. */
  floor?: { below: BelowFloor; level: number };
}

/** One watched feature of one series, with its baselines; points are scored on demand, so nothing grows with the history. */
export interface ScoredFeature {
  series: Series;
  k: number;
  feature: WatchedFeature;
  /** The feature's unit with "[unit]" resolved to the channel's. */
  unit: string;
  /** The stretches of the history between baseline restarts (one, the whole history, where none applies), and each one's baseline. */
  eras: Era[];
  bases: BaselineStats[];
  /** Each baseline's measurable floor (floor.ts), from its members' channel RMS; null where the feature has none. */
  baseFloors: (number | null)[];
  /** The baseline point i is held against: its era's. */
  baseAt(i: number): BaselineStats;
  at(i: number): ScoredPoint | null;
  /** Point i before the deadband: its own verdict, not yet held by the points before it. */
  raw(i: number): ScoredPoint | null;
}

/** Features that clipping can only lower: |x| cut to the range lowers the mean square and the largest magnitude alike. */
const CLIPPING_LOWERS = new Set(['rms', 'peak']);

export function scoreFeature(s: Series, k: number, o: TrendOptions): ScoredFeature {
  const feature = o.features[k], values = s.values[k];
  const eras = erasOf(s, o.baseline);
  const bases = eras.map((era) => baselineOf(s, k, era));
  const eraOf = (i: number) => eraAt(eras, s.time[i]);
  const limits = limitsFor(o, feature.name, s);
  // Each baseline's floor from its members' channel RMS (their median), each point's from its own.
  const baseFloors = bases.map((b) => floorOf(feature, s.unit, medianAndMad(b.members.map((i) => s.channelRms[i])).median));
  const pointAt = (i: number): ScoredPoint | null => {
    const value = values[i];
    if (!Number.isFinite(value)) return null;
    const e = eraOf(i), base = bases[e];
    const ok = usable(s, i);
    // A baseline or value below its floor is rounding: the change is bounded by the floor, and the score (which would divide by
    // a rounding-sized spread) is left out, but where only the value fell below it.
    const floor = base.complete ? againstFloor(value, floorOf(feature, s.unit, s.channelRms[i]), base.median, baseFloors[e], feature.level === 'power' ? 'power' : 'amplitude') : null;
    const cdb = !base.complete ? null : floor ? floor.changeDb : changeDb(value, base.median, feature.level);
    const score = base.complete && (!floor || floor.below === 'value') ? robustScore(value, base.median, base.mad, o.spreadFloor) : null;
    // Figures of a channel that fails the data-quality checks are not held against anything, with one exception: clipping
    // can only lower a broadband RMS or peak (each sample's magnitude is cut to the range), so one at or above a limit is
    // above it in truth as well, and a machine loud enough to saturate its sensor still sounds its alarm.
    const clipped = !ok && s.clippedOnly[i] === 1 && CLIPPING_LOWERS.has(feature.name);
    const limit = ok || clipped ? limitReached(value, limits) : null;
    const verdict = ok ? verdictOf({ value, changeDb: cdb, score, scored: base.complete, limit }, o)
      : clipped && limit ? verdictOf({ value, changeDb: null, score: null, scored: false, limit }, o) : null;
    return { value, baseline: base.complete ? base.median : null, changeDb: cdb, score, verdict, limit, ...(floor ? { floor: { below: floor.below, level: floor.floor } } : {}) };
  };
  // The verdicts after the deadband, worked out once over the series when first asked (a held verdict depends on the last one).
  let held: Uint8Array | null = null;
  const heldAt = (i: number): Verdict => {
    if (!held) {
      held = new Uint8Array(s.size);
      let previous: Verdict | null = null, era = 0;
      for (let j = 0; j < s.size; j++) {
        // A restarted baseline holds nothing over from the one before (a new sensor).
        const e = eraOf(j);
        if (e !== era) { era = e; previous = null; }
        const p = pointAt(j);
        if (!p?.verdict) continue;
        previous = heldVerdict(p.verdict, previous, nearness(p, o, limits));
        held[j] = VERDICTS.indexOf(previous) + 1;
      }
    }
    return VERDICTS[held[i] - 1];
  };
  return {
    series: s, k, feature, eras, bases, baseFloors, baseAt: (i) => bases[eraOf(i)], unit: feature.unit === '[unit]' ? s.unit : feature.unit, raw: pointAt,
    at(i) {
      const p = pointAt(i);
      if (!p?.verdict || p.verdict === 'alarm' || o.deadband === 0) return p;
      const verdict = heldAt(i);
      return verdict === p.verdict ? p : { ...p, verdict, held: true };
    },
  };
}

/** Every watched feature of every series. */
export const scoreHistory = (h: History, o: TrendOptions): ScoredFeature[] => h.series.flatMap((s) => o.features.map((_, k) => scoreFeature(s, k, o)));

const iso = (s: Series, i: number) => (s.startKnown[i] ? new Date(s.time[i]).toISOString() : null);

export interface ChangeItem {
  group: string;
  channel: string;
  /** The channel's unit (a channel whose unit changed has a history per unit). */
  channel_unit: string;
  feature: string;
  /** The feature's unit. */
  unit: string;
  verdict: 'changed' | 'alarm';
  /** The declared limit reached, if any, and the limits declared for the feature. */
  limit: 'warn' | 'alarm' | null;
  limits: { warn?: number; alarm?: number } | null;
  /** The latest recording of this run with a verdict on the feature. */
  recording: string;
  start_time: string | null;
  value: number;
  baseline: number | null;
  change_db: number | null;
  score: number | null;
  /** The first recording of the unbroken stretch of non-steady verdicts that ends at this one. */
  since: { recording: string; start_time: string | null };
  baseline_recordings: number;
  /** How far beyond its threshold the change is (largest of |change_db| / change_db threshold and |score| / score threshold); orders the list. */
  strength: number;
  /** Back inside its threshold but not yet by the deadband, so the verdict holds. */
  held: boolean;
  /** Present where the baseline or the value lies below its measurable floor: which, and the floor (then change_db is a bound: a rise of at least, a fall of at least its size). */
  floor?: { below: BelowFloor; level: number };
  /** Not reported at this verdict or above by the output folder's previous run (news.ts); absent before the news are marked. */
  new?: boolean;
  /**
   * Present where the run's last recording of the channel is later than `recording` and fails the data-quality checks, so
   * that `value` is the latest usable one: that recording, its start and the flags it fails.
   */
  failed_after?: { recording: string; start_time: string | null; flags: string[] };
}

export interface ChangesReport {
  baseline: string;
  thresholds: { change_db: number; score: number; spread_floor: number; deadband: number };
  features: string[];
  /** Verdicts over this run's rows of trends.parquet; unscored: baseline forming or data unusable. */
  totals: Record<Verdict | 'unscored', number>;
  /**
   * Channel features of this run by their latest verdict, what each reads tonight (unscored: none of its rows in this run has a
   * verdict); changed and alarm count the items. Absent from reports kept before it was counted.
   */
  latest?: Record<Verdict | 'unscored', number>;
  /** Channel features whose latest verdict is not steady: alarms first, then (once marked) the new changes, then the others; each part by strength. */
  items: ChangeItem[];
  /** Once the news are marked: how many items are new, and whether an earlier run's report was kept to compare with (false: every item is new). */
  news?: { new: number; compared: boolean };
  /** Channel features of this run with no baseline because its recordings hold figures of other spec options, another declaration or another version. */
  stale_baselines: number;
  /** Present when stale_baselines is not 0: of those, how many hold places stored by another version, under other options, under another declaration (a feature may count under several). */
  stale_causes?: Record<StaleCauseName, number>;
  /** Present when any: channels of this run whose baseline has not formed (no stale place held), their features and why. */
  unformed_baselines?: UnformedBaseline[];
  /** Present when any: per group, the unformed baselines that lack only recordings yet to come (of the spec's first N), counted. */
  forming_baselines?: FormingBaselines[];
  /** Channel features of a --since run whose baseline was formed from the run's period alone, no earlier result being stored. */
  period_baselines?: number;
  /** Of those, the ones still forming: the period holds fewer usable recordings than the baseline needs. */
  period_baselines_forming?: number;
  /** Present when trends.baseline.exclude is given: how many stored recordings it leaves out of the baselines. */
  excluded_recordings?: number;
  /** Present when trends.baseline.restart is given: each entry as written, and how many stored channel histories it restarts. */
  baseline_restarts?: { restart: string; histories: number }[];
  /** Present when a trends.limits entry names channels: those that name no stored channel (a limit that can never sound). */
  unmatched_limits?: string[];
  /** Present when any: channels of this run whose features may hold a change across stored recordings not computed again (deadband). */
  held_across_stale?: HeldAcrossStale[];
}

/** A channel whose baseline has not formed, so its features have no change verdict: which features, and why. */
export interface UnformedBaseline { group: string; channel: string; channel_unit: string; features: string[]; why: string }

/**
 * A group's channel features whose baselines of the first N lack only recordings not yet stored (a new archive's first
 * nights): how many, how many more recordings they wait for (fewest and most), and their entries' places in unformed_baselines.
 */
export interface FormingBaselines { group: string; channel_features: number; first: number; more_recordings: { fewest: number; most: number }; unformed_entries: number[] }

const strengthOf = (p: ScoredPoint, o: TrendOptions) => Math.max(p.changeDb == null ? 0 : Math.abs(p.changeDb) / o.changeDb, p.score == null ? 0 : Math.abs(p.score) / o.score);

/**
 * The latest state of each channel feature among this run's recordings, and the counts of all verdicts. `sinceMs` is the start
 * of the run's period (--since), so that baselines formed from that period alone are counted, unless `earlierStored` says
 * every recording of the archive outside the period is stored already (no run could form them from more). `steady` gathers
 * the keys (news.ts) of the channel features whose latest verdict is steady.
 */
export function changesReport(h: History, scored: ScoredFeature[], o: TrendOptions, sinceMs: number | null = null, earlierStored = false, steady: Set<string> = new Set()): ChangesReport {
  const totals = Object.fromEntries([...VERDICTS, 'unscored'].map((v) => [v, 0])) as ChangesReport['totals'];
  const latestTotals = { ...totals };
  const items: ChangeItem[] = [];
  let staleBaselines = 0, periodBaselines = 0, periodForming = 0;
  const staleCauses = Object.fromEntries(STALE_CAUSES.map((c) => [c, 0])) as Record<StaleCauseName, number>;
  const unformed = new Map<string, UnformedBaseline>();
  // Of those, the ones waiting only for recordings to come, by their key, with how many more each needs.
  const toCome = new Map<string, number>();
  for (const f of scored) {
    const s = f.series;
    let latest = -1, last = -1, rows = 0;
    for (let i = 0; i < s.size; i++) {
      if (!s.inRun[i]) continue;
      const p = f.at(i);
      if (!p) continue;
      rows++;
      last = i;
      totals[p.verdict ?? 'unscored']++;
      if (p.verdict) latest = i;
    }
    // The baseline this run's latest recording is held against (after a restart, the one formed since).
    if (rows) {
      const j = eraAt(f.eras, s.time[last]), base = f.bases[j];
      if (base.stale) {
        staleBaselines++;
        const cause = base.staleAt.reduce((c, i) => c | s.staleCause[f.k][i], 0);
        for (const c of causesOf(cause)) staleCauses[c]++;
      } else if (!base.complete) {
        // Named per channel and reason: the features of a channel usually share their baseline's recordings.
        const why = whyNotFormed(s, f.k, f.eras[j]), key = `${s.group}\u0000${s.channel}\u0000${s.unit}\u0000${why}`;
        const u = unformed.get(key) ?? unformed.set(key, { group: s.group, channel: s.channel, channel_unit: s.unit, features: [], why }).get(key)!;
        u.features.push(f.feature.name);
        const more = recordingsToCome(s, f.k, f.eras[j]);
        if (more != null) toCome.set(key, more);
      }
      if (sinceMs != null && !earlierStored && formedFromPeriodOnly(s, base, f.eras[j].baseline, sinceMs)) {
        periodBaselines++;
        if (!base.complete) periodForming++;
      }
    }
    if (rows) latestTotals[latest < 0 ? 'unscored' : f.at(latest)!.verdict!]++;
    if (latest < 0) continue;
    const p = f.at(latest)!;
    // Collected for the news: a change the previous run reported clears only where this run sees the feature steady.
    if (p.verdict === 'steady') steady.add(changeKey({ group: s.group, channel: s.channel, channel_unit: s.unit, feature: f.feature.name }));
    if (p.verdict === 'steady' || !p.verdict) continue;
    let since = latest;
    const eraStart = f.eras[eraAt(f.eras, s.time[latest])].fromMs;
    for (let i = latest - 1; i >= 0 && s.time[i] >= eraStart; i--) {
      const q = f.at(i);
      if (q?.verdict === 'steady') break;
      if (q?.verdict) since = i;
    }
    items.push({
      group: s.group, channel: s.channel, channel_unit: s.unit, feature: f.feature.name, unit: f.unit, verdict: p.verdict, limit: p.limit, limits: limitsFor(o, f.feature.name, s) ?? null,
      recording: h.recordings[s.recording[latest]], start_time: iso(s, latest), value: p.value, baseline: p.baseline, change_db: p.changeDb, score: p.score,
      since: { recording: h.recordings[s.recording[since]], start_time: iso(s, since) }, baseline_recordings: f.baseAt(latest).members.length,
      strength: strengthOf(p, o), held: p.held === true, ...(p.floor ? { floor: p.floor } : {}),
      ...(last > latest && !usable(s, last) ? { failed_after: { recording: h.recordings[s.recording[last]], start_time: iso(s, last), flags: failingFlags(s, last) } } : {}),
    });
  }
  items.sort((a, b) => (a.verdict === b.verdict ? b.strength - a.strength : a.verdict === 'alarm' ? -1 : 1));
  const held = heldAcrossStale(scored, o);
  return {
    baseline: baselineText(o.baseline), thresholds: { change_db: o.changeDb, score: o.score, spread_floor: o.spreadFloor, deadband: o.deadband },
    features: o.features.map((f) => f.name), totals, latest: latestTotals, items, stale_baselines: staleBaselines,
    ...(staleBaselines ? { stale_causes: staleCauses } : {}),
    ...(unformed.size ? { unformed_baselines: [...unformed.values()] } : {}),
    ...formingOf([...unformed], toCome, 'first' in o.baseline ? o.baseline.first : 0),
    ...(sinceMs != null ? { period_baselines: periodBaselines, period_baselines_forming: periodForming } : {}),
    ...(o.baseline.exclude.length ? { excluded_recordings: h.excluded } : {}),
    ...(o.baseline.restarts.length ? { baseline_restarts: o.baseline.restarts.map((r) => ({ restart: r.text, histories: h.series.filter((s) => r.applies(s.group, s.channel)).length })) } : {}),
    ...unmatchedLimits(h, o),
    ...(held.length ? { held_across_stale: held } : {}),
  };
}

/** The unformed baselines waiting only for recordings to come, counted by group (present when any). */
function formingOf(unformed: [string, UnformedBaseline][], toCome: ReadonlyMap<string, number>, first: number): Pick<ChangesReport, 'forming_baselines'> {
  const groups = new Map<string, FormingBaselines>();
  unformed.forEach(([key, u], i) => {
    const more = toCome.get(key);
    if (more == null) return;
    const g = groups.get(u.group) ?? groups.set(u.group, { group: u.group, channel_features: 0, first, more_recordings: { fewest: more, most: more }, unformed_entries: [] }).get(u.group)!;
    g.channel_features += u.features.length;
    g.more_recordings.fewest = Math.min(g.more_recordings.fewest, more);
    g.more_recordings.most = Math.max(g.more_recordings.most, more);
    g.unformed_entries.push(i);
  });
  return groups.size ? { forming_baselines: [...groups.values()] } : {};
}

/** The limit entries that name their channels, none of which any stored history has (present when any entry names channels). */
function unmatchedLimits(h: History, o: TrendOptions): Pick<ChangesReport, 'unmatched_limits'> {
  if (!Object.values(o.limits).flat().some((r) => r.names != null)) return {};
  return { unmatched_limits: namingNone(o, h.series).limits.map((r) => r.names!) };
}

/** trends.parquet rows of one scored feature: the points of the recordings this run covers, in start-time order, as columns. */
export function addTrendRows(h: History, f: ScoredFeature, into: Record<string, Column>): void {
  const s = f.series;
  const text = (name: string) => into[name] as TextColumn, number = (name: string) => into[name] as NumberColumn;
  for (let i = 0; i < s.size; i++) {
    if (!s.inRun[i]) continue;
    const p = f.at(i);
    if (!p) continue;
    text('recording').add(h.recordings[s.recording[i]]); text('group').add(s.group); text('channel').add(s.channel);
    text('feature').add(f.feature.name); text('unit').add(f.unit);
    // Every row is placed in time, as the history orders it (a row without a time sorts apart in a spreadsheet); in whole ms, as the column holds.
    number('start_time').add(Math.floor(s.time[i])); text('start_time_source').add(s.startKnown[i] ? 'recording' : 'modified');
    number('value').add(p.value); number('baseline').add(p.baseline); number('change_db').add(p.changeDb); number('score').add(p.score);
    text('verdict').add(p.verdict); text('limit').add(p.limit); text('quality').add(severityAt(s, i)); number('floor').add(p.floor?.level ?? null);
  }
}
