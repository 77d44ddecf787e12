// The data behind the "what changed" pictures of a channel: each changed feature's history against its baseline band, the
// latest spectrum over the baseline's, and the spectra across the recordings. Spectra are read from the stored results of only
// the recordings pictured, and kept in a few hundred bands even on a log frequency axis (`log-bands.ts`).
import { unpackSpectrum } from '../../stages/spectra.js';
import { welchBands, type Spectrum } from './log-bands.js';
import type { ReductionSpec } from '../../spec/reduction.js';
import { toolVersion } from '../declare/package-files.js';
import { groupKeys, type CacheEntry } from '../plan/cache.js';
import { baselineMembers, eraAt, erasOf, type BaselineStats } from './baseline.js';
import type { ChangeItem, ChangesReport, ScoredFeature } from './changes.js';
import { usable, type History, type Series } from './history.js';
import { limitsFor, type TrendOptions, type WatchedFeature } from './options.js';
import { spreadOf } from './score.js';
import type { Verdict } from './verdict.js';

/** Channels pictured at the top of the report, spectra per spectrogram, bands (about) per pictured spectrum. */
export const MAX_CHANNELS = 6, MAX_RECORDINGS = 40, MAX_BINS = 256;

export interface TrendPicture {
  feature: string;
  unit: string;
  /** usable: the channel passed the data-quality checks on that recording. */
  points: { t: number; value: number; verdict: Verdict | null; baseline: boolean; usable: boolean }[];
  median: number | null;
  /** Values between these read steady (change thresholds around the median, or up from below the floor); null while the baseline forms. */
  band: [number, number] | null;
  /** The baseline's measurable floor where its median lies below it: then the band reaches from the lowest value pictured up to the change threshold above the floor. */
  floor: number | null;
  /** Where the baseline of the median and band was formed again (a sensor replaced): they hold from there; null, the whole history. */
  restartedAt: number | null;
  limits: { warn?: number; alarm?: number } | null;
}

export type { Spectrum };

export interface ChannelPictures {
  group: string;
  channel: string;
  unit: string;
  items: ChangeItem[];
  trends: TrendPicture[];
  /** The latest recording's spectrum and the per-bin median of the baseline recordings' spectra. */
  spectrum: { latest: Spectrum; baseline: Spectrum | null; recording: string; baselineCount: number } | null;
  /** One spectrum per usable recording, oldest first (of the last MAX_RECORDINGS). */
  spectrogram: { t: number; recording: string; spectrum: Spectrum }[];
}

/** Per-bin median of spectra of the same shape. */
function medianSpectrum(list: Spectrum[]): Spectrum | null {
  if (!list.length) return null;
  const n = list[0].density.length;
  const out = new Float32Array(n), column = new Float64Array(list.length);
  for (let k = 0; k < n; k++) {
    list.forEach((s, j) => { column[j] = s.density[k]; });
    column.sort();
    const m = column.length >> 1;
    out[k] = column.length % 2 ? column[m] : (column[m - 1] + column[m]) / 2;
  }
  return { edges: list[0].edges, density: out };
}

/**
 * The band of values that read steady around a baseline's median, under both change thresholds. Where the median lies below
 * its measurable floor (`floor`), a change is bounded by the floor and not scored (changes.ts): every value up to the change
 * threshold above the floor reads steady, however far below it, so the band reaches down to `lowest` (0, or the lowest value pictured).
 */
export function steadyBand(level: WatchedFeature['level'], base: Pick<BaselineStats, 'complete' | 'median' | 'mad'>, o: Pick<TrendOptions, 'score' | 'changeDb' | 'spreadFloor'>, floor: number | null = null, lowest = 0): [number, number] | null {
  if (!base.complete) return null;
  const m = base.median, per = level === 'power' ? 10 : 20;
  if (floor != null && Math.abs(m) < floor) return [Math.min(0, lowest), floor * 10 ** (o.changeDb / per)];
  const spread = spreadOf(m, base.mad, o.spreadFloor);
  let hi = m + o.score * spread, lo = m - o.score * spread;
  if ((level === 'amplitude' || level === 'power') && m > 0) {
    hi = Math.min(hi, m * 10 ** (o.changeDb / per)); lo = Math.max(lo, m * 10 ** (-o.changeDb / per));
  }
  if (level === 'decibel') { hi = Math.min(hi, m + o.changeDb); lo = Math.max(lo, m - o.changeDb); }
  return [lo, hi];
}

export function trendPicture(f: ScoredFeature, o: TrendOptions): TrendPicture {
  const members = new Set(f.bases.flatMap((b) => b.members));
  const points: TrendPicture['points'] = [];
  for (let i = 0; i < f.series.size; i++) {
    const p = f.at(i);
    if (p) points.push({ t: f.series.time[i], value: p.value, verdict: p.verdict, baseline: members.has(i), usable: usable(f.series, i) });
  }
  // The median and band of the baseline the latest recording is held against.
  const j = eraAt(f.eras, f.series.time[f.series.size - 1]), base = f.bases[j];
  const floor = base.complete && f.baseFloors[j] != null && Math.abs(base.median) < f.baseFloors[j]! ? f.baseFloors[j] : null;
  // The lowest usable value the band spans: of the era it holds for (from a restart on).
  const from = j > 0 ? f.eras[j].fromMs : -Infinity;
  let lowest = 0;
  for (const p of points) if (p.usable && p.t >= from && p.value < lowest) lowest = p.value;
  return {
    feature: f.feature.name, unit: f.unit, points, median: base.complete ? base.median : null, band: steadyBand(f.feature.level, base, o, floor, lowest), floor,
    restartedAt: j > 0 ? f.eras[j].fromMs : null, limits: limitsFor(o, f.feature.name, f.series) ?? null,
  };
}

const sameChannel = (s: Series, c: { group: string; channel: string; unit: string }) => s.group === c.group && s.channel === c.channel && s.unit === c.unit;

/** Pictures of the channels with the strongest changes, reading the spectra they need in one pass over `entries`. */
export async function gatherPictures(h: History, scored: ScoredFeature[], report: ChangesReport, o: TrendOptions, spec: ReductionSpec, entries: AsyncIterable<CacheEntry>, version: string = toolVersion): Promise<ChannelPictures[]> {
  const channels: { series: Series; items: ChangeItem[] }[] = [];
  for (const item of report.items) {
    const at = { group: item.group, channel: item.channel, unit: item.channel_unit };
    const known = channels.find((c) => sameChannel(c.series, at));
    if (known) { known.items.push(item); continue; }
    if (channels.length === MAX_CHANNELS) continue;
    const series = h.series.find((s) => sameChannel(s, at));
    if (series) channels.push({ series, items: [item] });
  }
  // Which recordings' spectra each pictured channel needs: its baseline, and its last MAX_RECORDINGS.
  const wanted = new Map<string, { pic: number; point: number }[]>();
  const baselines = channels.map(({ series: s }, pic) => {
    const eras = erasOf(s, o.baseline), era = eras[eraAt(eras, s.time[s.size - 1])];
    const { members } = baselineMembers(s, era.baseline, undefined, undefined, era);
    const points = new Set([...members, ...Array.from({ length: Math.min(MAX_RECORDINGS, s.size) }, (_, j) => s.size - 1 - j)]);
    for (const point of points) {
      const name = h.recordings[s.recording[point]];
      (wanted.get(name) ?? wanted.set(name, []).get(name)!).push({ pic, point });
    }
    return members;
  });
  const spectra = channels.map(() => new Map<number, Spectrum>());
  const key = groupKeys(spec, version).spectrum;
  for await (const e of entries) {
    const uses = wanted.get(e.recording);
    if (!uses || e.status !== 'reduced' || !e.base) continue;
    const kept = e.groupKeys?.spectrum === key ? e.groups.spectrum?.kept?.spectrum : undefined;
    if (!kept) continue;
    for (const { pic, point } of uses) {
      const s = channels[pic].series;
      if (e.group !== s.group) continue;
      const c = e.base.channels.findIndex((ch) => ch.name === s.channel && ch.unit === s.unit);
      const spectrum = c >= 0 ? unpackSpectrum(kept[c]) : null;
      if (spectrum) spectra[pic].set(point, welchBands(spectrum, MAX_BINS));
    }
  }
  return channels.map(({ series: s, items }, pic) => {
    const have = spectra[pic];
    const latestPoint = [...have.keys()].filter((i) => h.recordings[s.recording[i]] === items[0].recording)[0];
    const latest = latestPoint != null ? have.get(latestPoint)! : null;
    const alike = (x: Spectrum) => latest != null && x.edges.length === latest.edges.length && x.edges.every((e, k) => e === latest.edges[k]);
    const base = baselines[pic].map((i) => have.get(i)).filter((x): x is Spectrum => x != null && alike(x));
    const recent = [...have.entries()].filter(([i]) => i >= s.size - MAX_RECORDINGS && usable(s, i) && alike(have.get(i)!)).sort((a, b) => a[0] - b[0]);
    const features = scored.filter((f) => f.series === s && items.some((it) => it.feature === f.feature.name));
    return {
      group: s.group, channel: s.channel, unit: s.unit, items,
      trends: items.map((it) => trendPicture(features.find((f) => f.feature.name === it.feature)!, o)),
      spectrum: latest ? { latest, baseline: medianSpectrum(base), recording: items[0].recording, baselineCount: base.length } : null,
      spectrogram: recent.map(([i, spectrum]) => ({ t: s.time[i], recording: h.recordings[s.recording[i]], spectrum })),
    };
  });
}
