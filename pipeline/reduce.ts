// Reduces one recording: read it once, feed every stage of every channel, keep each feature group's output apart
// (so a re-run can reuse some groups and recompute others), then assemble one row per channel.
import picomatch from 'picomatch';
import { activeStages, featureColumns } from '../stages/index.js';
import { openRecording } from '../stages/read/open.js';
import { RecordingError, type Recording } from '../stages/read/recording.js';
import type { ChannelContext, ColumnValues, Stage } from '../stages/stage.js';
import type { ChannelDeclaration } from './declare.js';
import { worst, type Flag, type Severity } from '../stages/quality/flag.js';
import type { RecordingJob } from './plan.js';
import { evidenceCharts } from './charts.js';
import type { Evidence } from '../stages/quality/evidence.js';

export type FeatureRow = Record<string, string | number | null>;

export interface ChannelQuality { channel: string; unit: string; severity: Severity; flags: Flag[]; evidence?: Record<string, unknown> }

/** What one feature group made for one recording: per channel (in channel order) its columns, flags and pictures' data. */
export interface GroupOutput {
  columns: ColumnValues[];
  flags: Flag[][];
  evidence: (Record<string, unknown> | null)[];
  /** Rows of secondary tables (windows.parquet…), by table name. */
  tables: Record<string, FeatureRow[]>;
  notes: string[];
}

/** Everything a reduction learnt about a recording, by feature group: the unit of caching and of sharding. */
export interface RecordingOutput {
  recording: string;
  group: string;
  status: 'reduced' | 'failed';
  reason?: string;
  base: {
    frames: number;
    sampleRate: number;
    header: { format: string; encoding: string; bits: number | null; start_time: string | null };
    channels: { name: string; quantity: string; unit: string }[];
    /** Findings of the reader (irregular time steps…). */
    notes: string[];
  } | null;
  groups: Record<string, GroupOutput>;
  seconds: number;
}

/** A recording's assembled result: the rows and tables it contributes and its quality verdict. */
export interface RecordingResult {
  recording: string;
  group: string;
  status: 'reduced' | 'failed';
  /** Why the recording failed: what, where, and what to do. */
  reason?: string;
  /** Findings that did not stop the reduction. */
  messages: string[];
  rows: FeatureRow[];
  /** Rows of secondary tables (windows.parquet…), by table name. */
  tables: Record<string, FeatureRow[]>;
  /** Quality flags per channel, with the pictures' data for channels that are not ok. */
  quality: ChannelQuality[];
  frames: number;
  sampleRate: number | null;
  /** How the file stores its samples, once its header was read. */
  header?: { format: string; encoding: string; bits: number | null; start_time: string | null };
  seconds: number;
}

const selected = (only: { names?: string[]; quantities?: string[] } | undefined, c: ChannelDeclaration) =>
  !only || (only.names ?? []).some((p) => picomatch.isMatch(c.name, p)) || (only.quantities ?? []).includes(c.quantity);

/** The declared channels in file order, or names and stored units from the file itself. */
function resolveChannels(job: RecordingJob, rec: Recording): { decl: ChannelDeclaration; index: number }[] {
  if (!job.channels) {
    const storedUnit = rec.normalised || rec.format !== 'csv' ? 'FS' : 'stored';
    return Array.from({ length: rec.channelCount }, (_, i) => ({
      index: i,
      decl: { name: rec.channelNames?.[i] ?? `ch${i + 1}`, quantity: 'unknown', unit: storedUnit, scale: 1, offset: 0, range: null, bits: null, max_frequency_hz: null },
    }));
  }
  if (rec.channelNames) {
    return job.channels.map((decl) => {
      const index = rec.channelNames!.indexOf(decl.name);
      if (index < 0) throw new RecordingError(`header: declared channel "${decl.name}" is not among the file's columns (${rec.channelNames!.join(', ')}); match the names in archive.yaml group "${job.group}" to the header`);
      return { decl, index };
    });
  }
  if (job.channels.length !== rec.channelCount) {
    throw new RecordingError(`header: the file has ${rec.channelCount} channels but group "${job.group}" declares ${job.channels.length}; fix the channel list in archive.yaml or check the file`);
  }
  return job.channels.map((decl, index) => ({ decl, index }));
}

/** Opens a recording and holds its header against the declaration; closes it again if they disagree. */
export async function openForJob(job: RecordingJob): Promise<{ rec: Recording; channels: { decl: ChannelDeclaration; index: number }[] }> {
  const rec = await openRecording(job.path, { format: job.format, sampleRate: job.sampleRate, layout: job.layout, chunkFrames: job.chunkFrames });
  try {
    if (job.sampleRate != null && Math.abs(rec.sampleRate - job.sampleRate) > 1e-9 * job.sampleRate) {
      throw new RecordingError(`header: the file says ${rec.sampleRate} Hz but group "${job.group}" declares ${job.sampleRate} Hz; correct sample_rate in archive.yaml or move the file to the right group`);
    }
    return { rec, channels: resolveChannels(job, rec) };
  } catch (e) {
    await rec.close();
    throw e;
  }
}

/** Reduces the feature groups the job names (all when it names none), reading the recording once. */
export async function computeRecording(job: RecordingJob): Promise<RecordingOutput> {
  const t0 = performance.now();
  const out: RecordingOutput = { recording: job.recording, group: job.group, status: 'failed', base: null, groups: {}, seconds: 0 };
  let rec: Recording | null = null;
  try {
    const opened = await openForJob(job);
    rec = opened.rec;
    const r = rec;
    const channels = opened.channels;
    const stages = activeStages(job.spec).filter((s) => !job.groups || job.groups.includes(s.definition.group));
    const outputOf = (group: string) => (out.groups[group] ??= {
      columns: channels.map(() => ({})), flags: channels.map(() => []), evidence: channels.map(() => null), tables: {}, notes: [],
    });
    const offers = channels.map(() => new Map<string, () => unknown>());
    const perChannel = channels.map(({ decl }, c) => {
      const shared = new Map<string, Stage>();
      const bits = decl.bits ?? r.bits;
      const own = stages.filter((s) => selected(s.only, decl)).map((s) => {
        const g = outputOf(s.definition.group);
        // Each stage's notes, rows and flags are filed under its own feature group.
        const ctx: ChannelContext = {
          name: decl.name, quantity: decl.quantity, unit: decl.unit, sampleRate: r.sampleRate, range: decl.range, bits,
          maxFrequencyHz: decl.max_frequency_hz,
          // One converter step in engineering units: full scale ±1 spans 2^bits codes.
          stepSize: r.normalised && bits ? Math.abs(decl.scale) / 2 ** (bits - 1) : null,
          // The most negative code is −1 of full scale, the most positive one step short of +1.
          fullScale: r.normalised && r.bits ? [-1, 1 - 2 ** (1 - r.bits)].map((v) => v * decl.scale + decl.offset).sort((a, b) => a - b) as [number, number] : null,
          declared: job.channels != null,
          declaredDurationS: job.durationS,
          timeSteps: () => r.timeSteps ?? null,
          shared: <T extends Stage>(key: string, make: () => T) => (shared.get(key) ?? shared.set(key, make()).get(key)) as T,
          note: (m) => { if (!g.notes.includes(m)) g.notes.push(m); },
          addRow: (table, row) => (g.tables[table] ??= []).push({ recording: job.recording, channel: decl.name, unit: decl.unit, ...row }),
          flag: (f) => g.flags[c].push(f),
          evidence: (name, make) => offers[c].set(name, make),
        };
        return { group: s.definition.group, stage: s.definition.create(ctx, s.options) };
      });
      // Shared products (made while the stages were created) are fed first, so every stage reads them complete.
      return { shared: [...shared.values()], own };
    });
    let scratch = new Float64Array(0);
    let frames = 0;
    for await (const chunk of rec.chunks()) {
      const n = chunk[0].length;
      if (scratch.length < n) scratch = new Float64Array(n);
      const eng = scratch.subarray(0, n);
      channels.forEach(({ decl, index }, c) => {
        const src = chunk[index];
        // Engineering units: stored value × scale + offset.
        for (let i = 0; i < n; i++) eng[i] = src[i] * decl.scale + decl.offset;
        for (const stage of perChannel[c].shared) stage.push(eng);
        for (const { stage } of perChannel[c].own) stage.push(eng);
      });
      frames += n;
    }
    perChannel.forEach(({ own }, c) => {
      for (const { group, stage } of own) Object.assign(outputOf(group).columns[c], stage.finish());
    });
    // Pictures are drawn only for channels whose flags ask for a second look, here in the worker, and kept with the result.
    const quality = out.groups.quality;
    if (quality) {
      quality.evidence = await Promise.all(quality.flags.map(async (flags, c) => {
        if (worst(flags.map((f) => f.severity)) === 'ok') return null;
        const data = Object.fromEntries([...offers[c]].map(([k, make]) => [k, make()])) as unknown as Evidence;
        return { charts: await evidenceCharts(data, channels[c].decl.unit) };
      }));
    }
    out.base = {
      frames, sampleRate: r.sampleRate,
      header: { format: r.format, encoding: r.encoding, bits: r.bits, start_time: r.startTime?.toISOString() ?? null },
      channels: channels.map(({ decl }) => ({ name: decl.name, quantity: decl.quantity, unit: decl.unit })),
      notes: [...r.notes],
    };
    out.status = 'reduced';
  } catch (e) {
    out.groups = {};
    out.reason = e instanceof RecordingError ? e.message : `unexpected error: ${(e as Error).stack ?? e}; please report it with the file`;
    if (!(e instanceof RecordingError) && (e as NodeJS.ErrnoException).code) out.reason = `${(e as Error).message}; check that the file exists and is readable`;
  } finally {
    await rec?.close();
    out.seconds = (performance.now() - t0) / 1000;
  }
  return out;
}

/** One row per channel, secondary tables and the quality verdict, from a recording's group outputs. */
export function assembleRecording(o: RecordingOutput, labels: Record<string, string>, spec: RecordingJob['spec']): RecordingResult {
  const result: RecordingResult = {
    recording: o.recording, group: o.group, status: o.status, reason: o.reason, messages: [], rows: [], tables: {}, quality: [],
    frames: o.base?.frames ?? 0, sampleRate: o.base?.sampleRate ?? null, header: o.base?.header, seconds: o.seconds,
  };
  if (o.status === 'failed' || !o.base) return result;
  const base = o.base;
  // Only the groups the spec asks for now: a stored group whose section was since removed contributes nothing.
  const active = new Set(activeStages(spec).map((s) => s.definition.group));
  const groups = Object.keys(o.groups).filter((g) => active.has(g)).sort();
  result.messages = [...base.notes, ...groups.flatMap((g) => o.groups[g].notes)];
  for (const g of groups) for (const [table, rows] of Object.entries(o.groups[g].tables)) (result.tables[table] ??= []).push(...rows);
  // Every feature column appears in every row: null where a stage did not apply to the channel.
  const blank: ColumnValues = Object.fromEntries(featureColumns(spec).map((col) => [col.name, null]));
  const startTime = base.header.start_time ? Date.parse(base.header.start_time) : null;
  result.rows = base.channels.map((ch, c) => {
    const flags = o.groups.quality?.flags[c] ?? [];
    const severity = worst(flags.map((f) => f.severity));
    const evidence = o.groups.quality?.evidence[c];
    result.quality.push({ channel: ch.name, unit: ch.unit, severity, flags, ...(evidence ? { evidence } : {}) });
    const values: ColumnValues = Object.assign({ ...blank }, ...groups.map((g) => o.groups[g].columns[c]));
    return {
      recording: o.recording, group: o.group, channel: ch.name, quantity: ch.quantity, unit: ch.unit,
      sample_rate: base.sampleRate, n: base.frames, duration_s: base.frames / base.sampleRate, start_time: startTime, ...labels,
      quality: severity, flags: flags.filter((f) => f.severity !== 'ok').map((f) => f.name).join(','), ...values,
    };
  });
  return result;
}

/** Reduces and assembles in one step (every group, nothing reused). */
export async function reduceRecording(job: RecordingJob): Promise<RecordingResult> {
  return assembleRecording(await computeRecording(job), job.labels, job.spec);
}
