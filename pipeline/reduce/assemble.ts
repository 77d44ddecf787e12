// A recording's group outputs → one row per channel, its secondary tables and its quality verdict.
import { activeStages, featureColumns, hasSpectralFigures } from '../../stages/index.js';
import type { ColumnValues } from '../../stages/stage.js';
import { forFigures, worst } from '../../stages/quality/flag.js';
import type { RecordingJob } from '../plan/plan.js';
import { rowObjects, type FeatureRow, type RecordingOutput, type RecordingResult, type SecondarySource } from './result.js';

/** What assembling needs from the spec, made once for many recordings: the groups it asks for and a row of its feature columns, all null. */
export interface Assembly { active: ReadonlySet<string>; blank: ColumnValues }

export function assemblyOf(spec: RecordingJob['spec']): Assembly {
  return {
    active: new Set(activeStages(spec).map((s) => s.definition.group)),
    // Every feature column appears in every row: null where a stage did not apply to the channel.
    blank: Object.fromEntries(featureColumns(spec).map((col) => [col.name, null])),
  };
}

/** One row per channel, secondary tables and the quality verdict, from a recording's group outputs. */
export function assembleRecording(o: RecordingOutput, labels: Record<string, string>, spec: RecordingJob['spec'], { active, blank }: Assembly = assemblyOf(spec)): RecordingResult {
  const secondary: Record<string, SecondarySource[]> = {};
  let tables: Record<string, FeatureRow[]> | null = null;
  const result: RecordingResult = {
    recording: o.recording, group: o.group, status: o.status, reason: o.reason, messages: [], rows: [],
    // Row objects only when asked for: the outputs read the packed columns.
    get tables() { return (tables ??= Object.fromEntries(Object.entries(secondary).map(([t, list]) => [t, list.reduce((to, s) => rowObjects(s, to), [] as FeatureRow[])]))); },
    secondary, quality: [],
    frames: o.base?.frames ?? 0, sampleRate: o.base?.sampleRate ?? null, header: o.base?.header, seconds: o.seconds,
  };
  if (o.status === 'failed' || !o.base) return result;
  const base = o.base;
  // Only the groups the spec asks for now: a stored group whose section was since removed contributes nothing.
  const groups = Object.keys(o.groups).filter((g) => active.has(g)).sort();
  result.messages = [...base.notes, ...groups.flatMap((g) => o.groups[g].notes)];
  // Each group's rows as they are held: a table may hold millions of rows (short windows of a long recording).
  for (const g of groups) for (const [table, rows] of Object.entries(o.groups[g].tables)) (secondary[table] ??= []).push({ rows, recording: o.recording, channels: base.channels });
  const startTime = base.header.start_time ? Date.parse(base.header.start_time) : null;
  result.rows = base.channels.map((ch, c) => {
    // The quality flags, then any a feature group raises on its own figure (velocity's low edge), so quality.json tells both.
    // A flag's spectral wording only where the channel has spectral figures now (the quality result is stored without that choice).
    const spectral = hasSpectralFigures(o.groups, groups, c);
    const flags = [...(o.groups.quality?.flags[c] ?? []).map((f) => forFigures(f, spectral)), ...groups.filter((g) => g !== 'quality').flatMap((g) => o.groups[g].flags?.[c] ?? [])];
    const severity = worst(flags.map((f) => f.severity));
    result.quality.push({ channel: ch.name, unit: ch.unit, severity, flags });
    // One object a row, filled in place (a row has some 150 keys): the fixed columns, the labels, the verdict, then every
    // feature column null and the groups' values over them, in the same key order as spreading them would give.
    const row: FeatureRow = {
      recording: o.recording, group: o.group, channel: ch.name, quantity: ch.quantity, unit: ch.unit,
      sample_rate: base.sampleRate, n: base.frames, duration_s: base.frames / base.sampleRate, start_time: startTime, ...labels,
      quality: severity, flags: flags.filter((f) => f.severity !== 'ok').map((f) => f.name).join(','),
    };
    Object.assign(row, blank);
    for (const g of groups) Object.assign(row, o.groups[g].columns[c]);
    return row;
  });
  return result;
}
