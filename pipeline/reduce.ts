// Reduces one recording: read it once, feed every stage of every channel, collect one row per channel.
import picomatch from 'picomatch';
import { activeStages, featureColumns } from '../stages/index.js';
import { openRecording } from '../stages/read/open.js';
import { RecordingError, type Recording } from '../stages/read/recording.js';
import type { ChannelContext, ColumnValues, Stage } from '../stages/stage.js';
import type { ChannelDeclaration } from './declare.js';
import { worst, type Flag, type Severity } from '../stages/quality/flag.js';
import type { RecordingJob } from './plan.js';

export type FeatureRow = Record<string, string | number | null>;

export interface ChannelQuality { channel: string; unit: string; severity: Severity; flags: Flag[]; evidence?: Record<string, unknown> }

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

export async function reduceRecording(job: RecordingJob): Promise<RecordingResult> {
  const t0 = performance.now();
  const result: RecordingResult = { recording: job.recording, group: job.group, status: 'failed', messages: [], rows: [], tables: {}, quality: [], frames: 0, sampleRate: null, seconds: 0 };
  let rec: Recording | null = null;
  try {
    const opened = await openForJob(job);
    rec = opened.rec;
    const channels = opened.channels;
    result.sampleRate = rec.sampleRate;
    result.header = { format: rec.format, encoding: rec.encoding, bits: rec.bits, start_time: rec.startTime?.toISOString() ?? null };
    const stages = activeStages(job.spec);
    const quality = channels.map(({ decl }): ChannelQuality & { offers: Map<string, () => unknown> } => ({ channel: decl.name, unit: decl.unit, severity: 'ok', flags: [], offers: new Map() }));
    const perChannel = channels.map(({ decl }, c) => {
      const shared = new Map<string, Stage>();
      const bits = decl.bits ?? rec!.bits;
      const r = rec!;
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
        note: (m) => { if (!result.messages.includes(m)) result.messages.push(m); },
        addRow: (table, row) => (result.tables[table] ??= []).push({ recording: job.recording, channel: decl.name, unit: decl.unit, ...row }),
        flag: (f) => quality[c].flags.push(f),
        evidence: (name, make) => quality[c].offers.set(name, make),
      };
      const own = stages.filter((s) => selected(s.only, decl)).map((s) => s.definition.create(ctx, s.options));
      // Shared products (made while the stages were created) are fed first, so every stage reads them complete.
      return [...shared.values(), ...own];
    });
    let scratch = new Float64Array(0);
    for await (const chunk of rec.chunks()) {
      const n = chunk[0].length;
      if (scratch.length < n) scratch = new Float64Array(n);
      const eng = scratch.subarray(0, n);
      channels.forEach(({ decl, index }, c) => {
        const src = chunk[index];
        // Engineering units: stored value × scale + offset.
        for (let i = 0; i < n; i++) eng[i] = src[i] * decl.scale + decl.offset;
        for (const stage of perChannel[c]) stage.push(eng);
      });
      result.frames += n;
    }
    result.messages.push(...rec.notes);
    const durationS = result.frames / rec.sampleRate;
    const startTime = rec.startTime ? rec.startTime.getTime() : null;
    // Every feature column appears in every row: null where a stage did not apply to the channel.
    const blank: ColumnValues = Object.fromEntries(featureColumns(job.spec).map((col) => [col.name, null]));
    result.rows = channels.map(({ decl }, c) => {
      const values: ColumnValues = Object.assign({ ...blank }, ...perChannel[c].map((s) => s.finish()));
      const q = quality[c];
      q.severity = worst(q.flags.map((f) => f.severity));
      return {
        recording: job.recording, group: job.group, channel: decl.name, quantity: decl.quantity, unit: decl.unit,
        sample_rate: rec!.sampleRate, n: result.frames, duration_s: durationS, start_time: startTime, ...job.labels,
        quality: q.severity, flags: q.flags.filter((f) => f.severity !== 'ok').map((f) => f.name).join(','), ...values,
      };
    });
    // Pictures are drawn only for channels that need a second look.
    result.quality = quality.map(({ offers, ...q }) => (q.severity === 'ok' ? q : { ...q, evidence: Object.fromEntries([...offers].map(([k, make]) => [k, make()])) }));
    result.status = 'reduced';
  } catch (e) {
    result.rows = [];
    result.tables = {};
    result.quality = [];
    result.reason = e instanceof RecordingError ? e.message : `unexpected error: ${(e as Error).stack ?? e}; please report it with the file`;
    if (!(e instanceof RecordingError) && (e as NodeJS.ErrnoException).code) result.reason = `${(e as Error).message}; check that the file exists and is readable`;
  } finally {
    await rec?.close();
    result.seconds = (performance.now() - t0) / 1000;
  }
  return result;
}
