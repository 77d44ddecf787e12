// A channel's history: every stored recording of the same group with the same channel (and unit), in start-time order,
// read once from the output folder's stored results and kept as compact typed arrays (about 20 bytes a recording and
// channel, plus 10 a watched feature), so that 100,000 recordings fit in a few tens of megabytes.
import { forFigures, SEVERITIES, worst, type Severity } from '../../stages/quality/flag.js';
import type { ReductionSpec } from '../../spec/reduction.js';
import { toolVersion } from '../declare/package-files.js';
import { groupKeys, storedEntries, type CacheEntry } from '../plan/cache.js';
import type { TrendOptions } from './options.js';
import { StaleCause } from './stale-cause.js';
import { FLAG_NAMES, hasSpectralFigures } from '../../stages/index.js';

/** A typed array that grows by doubling. */
class Growing<T extends Float64Array | Float32Array | Int32Array | Uint16Array | Uint8Array> {
  size = 0;
  constructor(public data: T, private readonly make: (n: number) => T) {}
  push(v: number): void {
    if (this.size === this.data.length) { const d = this.make(this.data.length * 2); d.set(this.data); this.data = d; }
    this.data[this.size++] = v;
  }
  /** The filled part, reordered by `order` (indices into it). */
  take(order: Int32Array): T {
    const out = this.make(Math.max(1, order.length));
    for (let i = 0; i < order.length; i++) out[i] = this.data[order[i]];
    return out.subarray(0, order.length) as T;
  }
}
const f64 = () => new Growing(new Float64Array(8), (n) => new Float64Array(n));
const f32 = () => new Growing(new Float32Array(8), (n) => new Float32Array(n));
const i32 = () => new Growing(new Int32Array(8), (n) => new Int32Array(n));
const u8 = () => new Growing(new Uint8Array(8), (n) => new Uint8Array(n));
const u16 = () => new Growing(new Uint16Array(8), (n) => new Uint16Array(n));

/** One group × channel × unit over time: point i is one stored recording. */
export interface Series {
  group: string;
  channel: string;
  unit: string;
  size: number;
  /** Index into History.recordings. */
  recording: Int32Array;
  /** Start time, ms since the epoch, or the file's modification time when the recording carries none (startKnown 0). */
  time: Float64Array;
  startKnown: Uint8Array;
  /** The channel's data-quality verdict on that recording, as an index into SEVERITIES. */
  severity: Uint8Array;
  /** 1 where the channel fails the checks on saturation alone: clipped, its RMS and peak can only read low. */
  clippedOnly: Uint8Array;
  /** The flags the channel fails on that recording, as bits by their place in FLAG_NAMES (failingFlags names them). */
  failing: Uint16Array;
  /** 1 when the recording belongs to this run. */
  inRun: Uint8Array;
  /** 1 when the recording is left out of the baseline (trends.baseline.exclude). */
  excluded: Uint8Array;
  /** The channel's RMS on that recording (statistics, computed on every run), which sets its figures' measurable floor; NaN when absent. */
  channelRms: Float32Array;
  /** Per watched feature (TrendOptions.features order): the value, NaN when absent or computed under other options. */
  values: Float64Array[];
  /** Per watched feature: 1 where the recording's feature group was computed under other options than the spec's now, or under another declaration of its group. */
  stale: Uint8Array[];
  /** Per watched feature: why a stale point is stale, as bits of StaleCause (0 where it is not). */
  staleCause: Uint8Array[];
}

export interface History {
  recordings: string[];
  series: Series[];
  /** How many stored recordings trends.baseline.exclude leaves out of the baselines. */
  excluded: number;
}

const FAIL = SEVERITIES.indexOf('fail');
export const usable = (s: Series, i: number) => s.severity[i] !== FAIL;
export const severityAt = (s: Series, i: number): Severity => SEVERITIES[s.severity[i]];
/** The flags the channel fails on point i, by name. */
export const failingFlags = (s: Series, i: number): string[] => FLAG_NAMES.filter((_, b) => s.failing[i] & (1 << b));

interface Building { group: string; channel: string; unit: string; recording: Growing<Int32Array>; time: Growing<Float64Array>; startKnown: Growing<Uint8Array>; severity: Growing<Uint8Array>; clippedOnly: Growing<Uint8Array>; failing: Growing<Uint16Array>; inRun: Growing<Uint8Array>; excluded: Growing<Uint8Array>; channelRms: Growing<Float32Array>; values: Growing<Float64Array>[]; stale: Growing<Uint8Array>[]; staleCause: Growing<Uint8Array>[] }

/** Per group (present name), the declaration keys its recordings are reduced under now (`declarationKey`); a group absent is not checked. */
export type Declarations = ReadonlyMap<string, ReadonlySet<string>>;

/**
 * Reads every stored entry once and keeps what trends need. A value counts only when the entry's feature group was computed
 * under the options the spec asks for now, by this version of quern (whose figures may differ from an earlier one's), and under
 * its group's present declaration: figures from other filters or bands, of another scale or sample rate, or of another
 * version's methods do not compare.
 */
export async function readHistory(out: string, spec: ReductionSpec, o: TrendOptions, inRun: ReadonlySet<string>, entries: AsyncIterable<CacheEntry> = storedEntries(out), declarations: Declarations = new Map(), version: string = toolVersion): Promise<History> {
  const recordings: string[] = [];
  const building = new Map<string, Building>();
  const keys = groupKeys(spec, version);
  // The spec's keys under each stored version, so that a key differing only by version is told from one of other options.
  const keysUnder = new Map<string, Record<string, string>>([[version, keys]]);
  const keysOf = (v: string) => keysUnder.get(v) ?? keysUnder.set(v, groupKeys(spec, v)).get(v)!;
  let excludedCount = 0;
  for await (const e of entries) {
    if (e.status !== 'reduced' || !e.base) continue;
    const declared = declarations.get(e.group);
    const sameDeclaration = !declared || declared.has(e.declKey);
    // The data-quality verdicts say which recordings may join a baseline: stored under other thresholds (or another
    // declaration or version), a point's usability is not known today either, so its figures do not compare.
    const sameQuality = e.groupKeys?.quality === keys.quality;
    const sameOptions = o.features.map((f) => sameDeclaration && sameQuality && e.groupKeys?.[f.group] === keys[f.group]);
    const comparable = o.features.map((f, k) => sameOptions[k] && e.groups[f.group] != null);
    const storedKeys = keysOf(e.version);
    const causes = o.features.map((f, k) => (sameOptions[k] ? 0
      : (e.groupKeys?.[f.group] !== storedKeys[f.group] || e.groupKeys?.quality !== storedKeys.quality ? StaleCause.options : 0) | (sameDeclaration ? 0 : StaleCause.declaration) | (e.version !== version ? StaleCause.version : 0)));
    const start = e.base.header.start_time ? Date.parse(e.base.header.start_time) : NaN;
    const r = recordings.push(e.recording) - 1;
    const excluded = o.excluded?.(e.recording) ? 1 : 0;
    excludedCount += excluded;
    e.base.channels.forEach((ch, c) => {
      const key = `${e.group}\u0000${ch.name}\u0000${ch.unit}`;
      let b = building.get(key);
      if (!b) building.set(key, b = { group: e.group, channel: ch.name, unit: ch.unit, recording: i32(), time: f64(), startKnown: u8(), severity: u8(), clippedOnly: u8(), failing: u16(), inRun: u8(), excluded: u8(), channelRms: f32(), values: o.features.map(f64), stale: o.features.map(u8), staleCause: o.features.map(u8) });
      b.recording.push(r);
      b.time.push(Number.isFinite(start) ? start : e.identity.mtimeMs);
      b.startKnown.push(Number.isFinite(start) ? 1 : 0);
      // As the results' assembly words them: spectral wording where the stored entry gave the channel spectral figures.
      const spectral = hasSpectralFigures(e.groups, Object.keys(e.groups), c);
      const flags = (e.groups.quality?.flags[c] ?? []).map((f) => forFigures(f, spectral));
      b.severity.push(SEVERITIES.indexOf(worst(flags.map((f) => f.severity))));
      const failing = flags.filter((f) => f.severity === 'fail');
      b.clippedOnly.push(failing.length > 0 && failing.every((f) => f.name === 'saturation') ? 1 : 0);
      b.failing.push(failing.reduce((bits, f) => bits | (FLAG_NAMES.indexOf(f.name as never) >= 0 ? 1 << FLAG_NAMES.indexOf(f.name as never) : 0), 0));
      b.inRun.push(inRun.has(e.recording) ? 1 : 0);
      b.excluded.push(excluded);
      // Only for the floor: a rough level is enough, whatever options the statistics were computed under.
      const rms = e.groups.statistics?.columns[c]?.rms;
      b.channelRms.push(typeof rms === 'number' ? rms : NaN);
      o.features.forEach((f, k) => {
        const v = comparable[k] ? e.groups[f.group].columns[c]?.[f.name] : null;
        b!.values[k].push(typeof v === 'number' ? v : NaN);
        b!.stale[k].push(sameOptions[k] ? 0 : 1);
        b!.staleCause[k].push(causes[k]);
      });
    });
  }
  const series = [...building.values()].map((b): Series => {
    const n = b.recording.size;
    // Start-time order; recordings starting together by name, so the order never depends on how the store lists them.
    const order = Int32Array.from({ length: n }, (_, i) => i).sort((i, j) => b.time.data[i] - b.time.data[j] || (recordings[b.recording.data[i]] < recordings[b.recording.data[j]] ? -1 : 1));
    return {
      group: b.group, channel: b.channel, unit: b.unit, size: n,
      recording: b.recording.take(order), time: b.time.take(order), startKnown: b.startKnown.take(order), severity: b.severity.take(order), clippedOnly: b.clippedOnly.take(order), failing: b.failing.take(order), inRun: b.inRun.take(order), excluded: b.excluded.take(order), channelRms: b.channelRms.take(order),
      values: b.values.map((v) => v.take(order)), stale: b.stale.map((v) => v.take(order)), staleCause: b.staleCause.map((v) => v.take(order)),
    };
  });
  series.sort((a, b) => (a.group + '\u0000' + a.channel + '\u0000' + a.unit < b.group + '\u0000' + b.channel + '\u0000' + b.unit ? -1 : 1));
  return { recordings, series, excluded: excludedCount };
}
