// The spec's `trends` section resolved: which feature columns are watched, the baseline, the change thresholds and limits.
import picomatch from 'picomatch';
import { activeStages } from '../../stages/index.js';
import type { BaselineRestartSpec, FeatureLimits, ReductionSpec, TrendsSpec } from '../../spec/reduction.js';
import { nearestNames } from '../declare/nearest-names.js';
import { UsageError } from '../declare/yaml-file.js';
import { isoTimeMs } from '../../stages/read/iso-time.js';

/** How a feature's change is put in decibels: as an amplitude ratio (20·log10), a power ratio (10·log10), a difference of dB values, or not at all. */
export type LevelKind = 'amplitude' | 'power' | 'decibel' | null;

export interface WatchedFeature {
  name: string;
  /** The column's unit; "[unit]" is the channel's own. */
  unit: string;
  /** The feature group (cache unit) that computes it. */
  group: string;
  level: LevelKind;
}

/** A channel's baseline formed again from `fromMs` on, from its first `first` usable recordings there; `text` as the spec wrote it. */
export interface BaselineRestart {
  /** Which group × channel histories it restarts. */
  applies: (group: string, channel: string) => boolean;
  fromMs: number;
  first: number;
  text: string;
}

/**
 * The baseline: the first N usable recordings or a period, less the recordings `exclude` names (patterns as written), formed
 * again for some channels from a date on (`restarts`, in the order written).
 */
export type Baseline = ({ first: number } | { fromMs: number; untilMs: number; text: string }) & { exclude: string[]; restarts: BaselineRestart[] };

export interface TrendOptions {
  features: WatchedFeature[];
  baseline: Baseline;
  /** Whether a recording is left out of every baseline (trends.baseline.exclude); null when nothing is. */
  excluded: ((recording: string) => boolean) | null;
  changeDb: number;
  score: number;
  spreadFloor: number;
  /** Fraction of each threshold by which a changed or alarm verdict must fall back before it clears. */
  deadband: number;
  /** Per feature, its limit rules in the order given: the first that applies to a channel is its limit. */
  limits: Record<string, LimitRule[]>;
}

/**
 * A feature's limits for the channels a rule applies to (every channel where the spec gave one object); `names`, for an
 * entry that names its channels, says which (as written), so that one naming no stored channel can be told.
 */
export interface LimitRule { applies: (group: string, channel: string) => boolean; limits: FeatureLimits; names: string | null }

/** What a channel is in a history: its group and name. */
export interface ChannelAt { group: string; channel: string }

/** The restarts and the limit entries that name their channels, and apply to none of `seen`: a typo, or a channel gone. */
export function namingNone(o: TrendOptions, seen: readonly ChannelAt[]): { restarts: TrendOptions['baseline']['restarts']; limits: LimitRule[] } {
  const none = (applies: (group: string, channel: string) => boolean) => !seen.some((c) => applies(c.group, c.channel));
  return { restarts: o.baseline.restarts.filter((r) => none(r.applies)), limits: Object.values(o.limits).flat().filter((r) => r.names != null && none(r.applies)) };
}

/** The limits of a feature on one channel: the first rule that applies, or none. */
export function limitsFor(o: TrendOptions, feature: string, at: ChannelAt): FeatureLimits | undefined {
  return o.limits[feature]?.find((r) => r.applies(at.group, at.channel))?.limits;
}

const EVERY = () => true;

/** trends.limits resolved: one object applies everywhere; a list's entries each to the channels and groups they name (globs). */
function limitRules(limits: NonNullable<TrendsSpec['limits']>): Record<string, LimitRule[]> {
  type Entry = FeatureLimits & { channel?: string; group?: string };
  return Object.fromEntries(Object.entries(limits).map(([feature, given]) => [feature, (Array.isArray(given) ? given : [given as Entry]).map(({ channel, group, ...l }, i) => {
    const c = channel == null ? EVERY : picomatch(channel), g = group == null ? EVERY : picomatch(group);
    const names = channel == null && group == null ? null : `${feature}[${i}] (${[channel != null ? `channel ${channel}` : null, group != null ? `group ${group}` : null].filter(Boolean).join(', ')})`;
    return { applies: (gr: string, ch: string) => g(gr) && c(ch), limits: { ...(l.warn != null ? { warn: l.warn } : {}), ...(l.alarm != null ? { alarm: l.alarm } : {}) }, names };
  })]));
}

export const DEFAULT_FEATURES = ['rms', 'peak', 'crest_factor', 'kurtosis', 'band_*_rms', 'velocity_*_rms', 'env_rms'];

/** Dimensionless features that are ratios of amplitudes, so that 20·log10 of their ratio is a level change. */
const AMPLITUDE_RATIOS = new Set(['crest_factor']);
/** Signed figures in the channel's unit: a level ratio or a floor means nothing for a value that may cross zero. */
const SIGNED = new Set(['mean', 'min', 'max']);
/** Units that are not amplitudes: frequencies, times, counts of bits, shaft speeds. */
const NOT_LEVELS = new Set(['Hz', 's', 'bit', 'rpm']);

// A level in decibels ("dB", "dB re 20 µPa") changes by the difference; a mean square (a squared unit) is a power (common practice).
export function levelKind(name: string, unit: string): LevelKind {
  if (unit === 'dB' || unit.startsWith('dB ')) return 'decibel';
  if (unit.endsWith('^2') || unit.endsWith('²')) return 'power';
  if (unit === '1') return AMPLITUDE_RATIOS.has(name) ? 'amplitude' : null;
  if (SIGNED.has(name)) return null;
  return NOT_LEVELS.has(unit) ? null : 'amplitude';
}

/** The feature columns this spec's stages write, with the group of each. */
const columnsOf = (spec: ReductionSpec) => activeStages(spec).flatMap((s) => s.definition.columns(s.options).map((c) => ({ ...c, group: s.definition.group })));

/**
 * The entries of trends.features that match no column of this spec, with the columns nearest each. The default list's
 * entries are watched where present (a spec without envelope has no env_rms), so only other names count as mistakes.
 */
export function unknownFeatures(spec: ReductionSpec): { index: number; pattern: string; nearest: string[] }[] {
  const names = columnsOf(spec).map((c) => c.name);
  return (spec.trends?.features ?? [])
    .map((pattern, index) => ({ index, pattern }))
    .filter(({ pattern }) => { if (DEFAULT_FEATURES.includes(pattern)) return false; const matches = picomatch(pattern); return !names.some((n) => matches(n)); })
    .map((u) => ({ ...u, nearest: nearestNames(u.pattern, names) }));
}

/** The names in trends.limits that are no column of this spec, with the columns nearest each. */
export function unknownLimits(spec: ReductionSpec): { name: string; nearest: string[] }[] {
  const names = columnsOf(spec).map((c) => c.name);
  return Object.keys(spec.trends?.limits ?? {}).filter((name) => !names.includes(name)).map((name) => ({ name, nearest: nearestNames(name, names) }));
}

/** A date or date-time, taken as UTC when it names no zone (ISO 8601 on a real calendar day, as files' start times are). */
function instant(text: string, key: string): number {
  const t = isoTimeMs(text);
  if (!Number.isFinite(t)) throw new UsageError(`reduction spec: trends.baseline.${key}: "${text}" is not a date or date-time (2026-11-16, 2026-11-16T02:00Z)`);
  return t;
}

/** trends.baseline.restart resolved: names and globs made matchers, dates instants; `first` defaults to the baseline's own N, or 3. */
function restartsOf(specs: BaselineRestartSpec[], first: number): BaselineRestart[] {
  return specs.map((r, i) => {
    const channel = picomatch(r.channel), group = r.group == null ? () => true : picomatch(r.group);
    return {
      applies: (g: string, c: string) => group(g) && channel(c), fromMs: instant(r.from, `restart[${i}].from`), first: r.first ?? first,
      text: `${r.group == null ? '' : `${r.group} `}${r.channel} from ${r.from}`,
    };
  });
}

/** The resolved section, or null when the spec has no `trends` section. Throws UsageError for a section that cannot work. */
export function trendOptions(spec: ReductionSpec): TrendOptions | null {
  const t = spec.trends;
  if (!t) return null;
  const patterns = t.features ?? DEFAULT_FEATURES;
  const columns = columnsOf(spec);
  const limits = t.limits ?? {};
  // A feature with a declared limit is watched whether or not a pattern names it.
  // Each pattern made into a matcher once, not once for every column.
  const matchers = patterns.map((p) => picomatch(p));
  const watched = columns.filter((c) => c.name in limits || matchers.some((matches) => matches(c.name)));
  const exclude = t.baseline?.exclude ?? [];
  const first = t.baseline && 'first' in t.baseline ? t.baseline.first : 3;
  const restarts = restartsOf(t.baseline?.restart ?? [], first);
  let baseline: Baseline = { first, exclude, restarts };
  if (t.baseline && 'from' in t.baseline) {
    const fromMs = instant(t.baseline.from, 'from'), untilMs = instant(t.baseline.until, 'until');
    if (!(untilMs > fromMs)) throw new UsageError(`reduction spec: trends.baseline: until (${t.baseline.until}) must come after from (${t.baseline.from})`);
    baseline = { fromMs, untilMs, text: `${t.baseline.from} to ${t.baseline.until}`, exclude, restarts };
  }
  // Recording names as the tables give them (relative to the archive's root), matched by name or glob.
  const excluded = exclude.length ? picomatch(exclude, { dot: true }) : null;
  return {
    features: watched.map((c) => ({ name: c.name, unit: c.unit, group: c.group, level: levelKind(c.name, c.unit) })),
    baseline,
    excluded,
    changeDb: t.change_db ?? 6,
    score: t.score ?? 6,
    spreadFloor: t.spread_floor ?? 0.1,
    deadband: t.deadband ?? 0.2,
    limits: limitRules(limits),
  };
}

/** The baseline in words, for the report. */
export const baselineText = (b: Baseline) =>
  ('first' in b ? `the first ${b.first} usable recordings of each group and channel by start time` : `the recordings starting from ${b.text}`)
  + (b.exclude.length ? `, leaving out ${b.exclude.join(', ')}` : '')
  + (b.restarts.length ? `; formed again ${b.restarts.map((r) => `for ${r.text} (its first ${r.first})`).join(', ')}` : '');
