// What reduction.yaml's schema cannot say: Welch segments a power of two of a size a thread can hold, an MTVV window a
// channel can hold, bands whose edges are in order, and trends watching (and limiting) columns that exist. Caught here,
// a mistake stops the run once with file, line and key, instead of failing every recording or writing figures of 0.
import type { ReductionSpec } from '../../spec/reduction.js';
import { activeStages } from '../../stages/index.js';
import { unknownFeatures, unknownLimits } from '../trends/options.js';
import { isoTimeMs } from '../../stages/read/iso-time.js';
import type { Problem, YamlSource } from './yaml-file.js';

/** Longest Welch segment: 0.05 Hz resolution at 51.2 kHz, some 8 MB a buffer per channel (our choice). */
export const MAX_SEGMENT = 2 ** 20;

/**
 * Longest MTVV integration time: ten times the 1 s running window ISO 2631-1 defines (from memory; 1 s is common practice),
 * some 4 MB of running window per channel at 51.2 kHz, as the window holds every sample of it (our choice).
 */
export const MAX_MTVV_S = 10;

type Path = (string | number)[];
type Ranges = [number, number][];

/** The list of [low, high] ranges of a section in either of its forms, with the path of the list. */
const rangesAt = (v: Ranges | { ranges: Ranges } | undefined, key: string): [Ranges, Path] => (Array.isArray(v) ? [v, [key]] : [v?.ranges ?? [], [key, 'ranges']]);

export function checkSpec(spec: ReductionSpec, source: YamlSource): Problem[] {
  const problems: Problem[] = [];
  const segment = spec.spectrum?.segment;
  if (segment != null && !(Number.isInteger(Math.log2(segment)) && segment >= 16 && segment <= MAX_SEGMENT)) {
    problems.push(source.problem(['spectrum', 'segment'], `must be a power of two from 16 to ${MAX_SEGMENT}, got ${segment}`));
  }
  const integration = spec.mtvv?.integration_s;
  if (integration != null && !(integration <= MAX_MTVV_S)) {
    problems.push(source.problem(['mtvv', 'integration_s'], `must be at most ${MAX_MTVV_S} s (ISO 2631-1 integrates over 1 s), got ${integration}`));
  }
  for (const key of ['bands', 'velocity_bands'] as const) {
    const [ranges, at] = rangesAt(spec[key], key);
    ranges.forEach(([lo, hi], i) => { if (!(lo < hi)) problems.push(source.problem([...at, i], `must be [low, high] with low < high, got [${lo}, ${hi}]`)); });
  }
  const octaves = spec.octave_bands == null ? [] : Array.isArray(spec.octave_bands) ? spec.octave_bands : [spec.octave_bands];
  octaves.forEach((o, i) => {
    const at = Array.isArray(spec.octave_bands) ? ['octave_bands', i] : ['octave_bands'];
    if (o.from != null && o.to != null && !(o.from < o.to)) problems.push(source.problem(at, `from must be below to, got ${o.from} and ${o.to}`));
  });
  const filter = spec.envelope?.filter;
  if (filter?.low_hz != null && filter.high_hz != null && !(filter.low_hz < filter.high_hz)) {
    problems.push(source.problem(['envelope', 'filter'], `low_hz must be below high_hz, got ${filter.low_hz} and ${filter.high_hz}`));
  }
  // A watched name that matches no column would watch nothing, every night, without a word.
  for (const u of unknownFeatures(spec)) {
    problems.push(source.problem(['trends', 'features', u.index], `"${u.pattern}" matches no feature column of this spec (nearest: ${u.nearest.join(', ')}); name a column of features.parquet or a glob over them, or turn on the section that computes it`));
  }
  // A limit on a column that does not exist would never be reached, so no alarm could ever sound.
  for (const u of unknownLimits(spec)) {
    problems.push(source.problem(['trends', 'limits', u.name], `no feature column of this spec is named "${u.name}" (nearest: ${u.nearest.join(', ')}); name a column of features.parquet, or turn on the section that computes it`, true));
  }
  problems.push(...trendDateProblems(spec, source), ...limitOrderProblems(spec, source), ...twiceMadeProblems(spec, source));
  return problems;
}

/** Where each feature group's options lie in reduction.yaml (the group's own name where it is the key). */
const SECTION_OF: Record<string, string> = { time_weighting: 'time_weighting_s', velocity: 'velocity_bands' };

/**
 * A column two figures would both make (the same band twice, `[20, 200]` and `[20.0, 200]`, an order listed twice,
 * overlapping octave sets, the same time constant twice): features.parquet can hold it once, so the spec names it once.
 */
function twiceMadeProblems(spec: ReductionSpec, source: YamlSource): Problem[] {
  const makers = new Map<string, string[]>();
  for (const s of activeStages(spec)) for (const c of s.definition.columns(s.options)) {
    const section = SECTION_OF[s.definition.group] ?? s.definition.group;
    (makers.get(c.name) ?? makers.set(c.name, []).get(c.name)!).push(section);
  }
  // One problem a section, naming the columns it would make twice.
  const bySection = new Map<string, string[]>();
  for (const [name, sections] of makers) {
    if (sections.length < 2) continue;
    const key = sections.find((k) => k in spec) ?? sections[0];
    (bySection.get(key) ?? bySection.set(key, []).get(key)!).push(name);
  }
  return [...bySection].map(([key, names]) => source.problem([key], `would make ${names.length === 1 ? 'the column' : 'the columns'} ${names.slice(0, 4).join(', ')}${names.length > 4 ? `, … (${names.length} in all)` : ''} more than once, which features.parquet holds once; list each band, order, time constant or octave set once`));
}

const DATE_FORMS = '(2026-11-16, 2026-11-16T02:00Z)';

/** The baseline's dates: days of the calendar, a period that ends after it starts, restarts on real days. */
function trendDateProblems(spec: ReductionSpec, source: YamlSource): Problem[] {
  const problems: Problem[] = [], b = spec.trends?.baseline;
  if (!b) return problems;
  const at = (path: Path, text: string) => {
    const t = isoTimeMs(text);
    if (!Number.isFinite(t)) problems.push(source.problem(path, `"${text}" is not a date or date-time on the calendar ${DATE_FORMS}`));
    return t;
  };
  if ('from' in b) {
    const from = at(['trends', 'baseline', 'from'], b.from), until = at(['trends', 'baseline', 'until'], b.until);
    if (Number.isFinite(from) && Number.isFinite(until) && !(until > from)) problems.push(source.problem(['trends', 'baseline', 'until'], `must come after from (${b.from}), got ${b.until}`));
  }
  (b.restart ?? []).forEach((r, i) => at(['trends', 'baseline', 'restart', i, 'from'], r.from));
  return problems;
}

/** A limit's alarm lies beyond its warning: a feature at or above warn reads changed, at or above alarm alarm. */
function limitOrderProblems(spec: ReductionSpec, source: YamlSource): Problem[] {
  const problems: Problem[] = [];
  for (const [feature, given] of Object.entries(spec.trends?.limits ?? {})) {
    const entries = Array.isArray(given) ? given : [given];
    entries.forEach((l, i) => {
      if (l.warn != null && l.alarm != null && !(l.alarm > l.warn)) {
        problems.push(source.problem(['trends', 'limits', feature, ...(Array.isArray(given) ? [i] : []), 'alarm'], `must be above warn (${l.warn}), got ${l.alarm}: a feature reaches warn first and alarm beyond it`));
      }
    });
  }
  return problems;
}
