// Reduces one recording: read it once, feed every stage of every channel, keep each feature group's output apart
// (so a re-run can reuse some groups and recompute others).
import picomatch from 'picomatch';
import { activeStages, type ActiveStage } from '../../stages/index.js';
import { DECLARE_IN_ARCHIVE, openRecording } from '../../stages/read/open.js';
import { RecordingError, withStart, type Recording } from '../../stages/read/recording.js';
import { THREAD_SCRATCH, type ScratchBuffers } from '../../stages/scratch.js';
import type { ChannelContext, Stage } from '../../stages/stage.js';
import { PackedRows } from '../../stages/packed-rows.js';
import type { ChannelDeclaration } from '../../spec/archive.js';
import { NEEDS_A_LOOK, thresholdsOf, worst } from '../../stages/quality/flag.js';
import { rawDurationProblem } from './raw-duration.js';
import type { RecordingJob } from '../plan/plan.js';
import { packEvidence, type Evidence } from '../../stages/quality/evidence.js';
import { assembleRecording } from './assemble.js';
import { effectiveBits, headerNotes } from './header-notes.js';
import { declaredGrid } from '../../stages/quality/float-grid.js';
import type { RecordingOutput, RecordingResult } from './result.js';

const selected = (only: { names?: string[]; quantities?: string[] } | undefined, c: ChannelDeclaration) =>
  !only || (only.names ?? []).some((p) => picomatch.isMatch(c.name, p)) || (only.quantities ?? []).includes(c.quantity);

/** The declared channels in file order, or names and stored units from the file itself. */
function resolveChannels(job: RecordingJob, rec: Recording): { decl: ChannelDeclaration; index: number }[] {
  if (!job.channels) {
    // Integer codes are normalised to full scale, and audio files keep floats on that scale by convention; other floats (CSV,
    // HDF5, MAT, raw) are the numbers as stored, in whatever unit the writer meant.
    const storedUnit = rec.normalised || rec.format === 'wav' || rec.format === 'flac' ? 'FS' : 'stored';
    return Array.from({ length: rec.channelCount }, (_, i) => ({
      index: i,
      decl: { name: rec.channelNames?.[i] ?? `ch${i + 1}`, quantity: 'unknown', unit: storedUnit, scale: 1, offset: 0, range: null, bits: null, max_frequency_hz: null },
    }));
  }
  if (rec.channelNames) {
    return job.channels.map((decl) => {
      const index = rec.channelNames!.indexOf(decl.name);
      if (index < 0) throw new RecordingError(`header: declared channel "${decl.name}" is not among the file's ${rec.format === 'csv' ? 'columns' : 'channel names'} (${rec.channelNames!.join(', ')}); match the names in archive.yaml group "${job.group}" to the file's`);
      return { decl, index };
    });
  }
  if (job.channels.length !== rec.channelCount) {
    // A matrix whose other axis holds as many as declared lies the other way round from its declared channel axis.
    const turned = rec.otherAxis?.channels === job.channels.length ? `; its other axis holds ${job.channels.length}: if those are the channels, change ${rec.otherAxis.where}` : '';
    throw new RecordingError(`header: the file has ${rec.channelCount} channels but group "${job.group}" declares ${job.channels.length}${turned || '; fix the channel list in archive.yaml or check the file'}`);
  }
  return job.channels.map((decl, index) => ({ decl, index }));
}

/** Engineering units: stored value × scale + offset. */
function toEngineering(stored: Float64Array, scale: number, offset: number, out: Float64Array): void {
  for (let i = 0; i < stored.length; i++) out[i] = stored[i] * scale + offset;
}

/** A recording of no samples has no figures to trust, however clean its flags would read. */
const noSamples = () => new RecordingError('the recording holds no samples (0 frames): the capture stopped before its first sample; check the logger, then recapture or remove the file');

/**
 * Opens a recording and holds its header against the declaration; closes it again if they disagree. `notes`: what the
 * header says against the declaration without stopping the recording (declared bits wider than the file's, a slow time column).
 */
export async function openForJob(job: RecordingJob): Promise<{ rec: Recording; channels: { decl: ChannelDeclaration; index: number }[]; notes: string[] }> {
  const rec = await openRecording(job.path, { format: job.format, sampleRate: job.sampleRate, layout: job.layout, ...job.reader, chunkFrames: job.chunkFrames });
  try {
    if (job.sampleRate != null && Math.abs(rec.sampleRate - job.sampleRate) > 1e-9 * job.sampleRate) {
      throw new RecordingError(`header: the file says ${rec.sampleRate} Hz but group "${job.group}" declares ${job.sampleRate} Hz; correct ${(job.reader?.declareHow ?? DECLARE_IN_ARCHIVE).where.sample_rate} or move the file to the right group`);
    }
    if (rec.frames === 0) throw noSamples();
    // A raw file's layout is only declared: a duration off the declared one is the sign of a wrong one, whose figures would mislead.
    const offLayout = rec.format === 'raw' && job.layout && rec.frames != null ? rawDurationProblem(rec.frames, rec.sampleRate, job.layout, job.durationS, thresholdsOf(job.spec.quality).declaration.duration_tolerance, job.group) : null;
    if (offLayout) throw new RecordingError(offLayout);
    const channels = resolveChannels(job, rec);
    return { rec, channels, notes: headerNotes(channels.map((c) => c.decl), rec, job.group) };
  } catch (e) {
    await rec.close();
    // The header was read: its start still places the recording in a period, and check shows it.
    throw withStart(e, rec.startTime);
  }
}

/**
 * Reduces the feature groups the job names (all when it names none), reading the recording once; `active` is the spec's
 * stages, made once for many recordings; `buffers` lends the stages their working buffers; `onProgress` is called after
 * each chunk and each channel's finish.
 */
export async function computeRecording(
  job: RecordingJob,
  { active = activeStages(job.spec), buffers = THREAD_SCRATCH, onProgress = () => {} }: { active?: ActiveStage[]; buffers?: ScratchBuffers; onProgress?: () => void } = {},
): Promise<RecordingOutput> {
  const t0 = performance.now();
  const out: RecordingOutput = { recording: job.recording, group: job.group, status: 'failed', base: null, groups: {}, seconds: 0 };
  let rec: Recording | null = null;
  // The stages' working buffers, lent for this recording and taken back at its end (its output holds none of them).
  const lent: Float64Array[] = [];
  const scratch = (length: number): Float64Array => { const b = buffers.take(length); lent.push(b); return b; };
  try {
    const opened = await openForJob(job);
    rec = opened.rec;
    const r = rec;
    const channels = opened.channels;
    const stages = active.filter((s) => !job.groups || job.groups.includes(s.definition.group));
    const outputOf = (group: string) => (out.groups[group] ??= {
      columns: channels.map(() => ({})), flags: channels.map(() => []), evidence: channels.map(() => null), tables: {}, notes: [],
    });
    const offers = channels.map(() => new Map<string, () => unknown>());
    const recordingShared = new Map<string, unknown>();
    const tachoChannels = channels.filter(({ decl }) => decl.pulses_per_rev).map(({ decl }) => decl.name);
    const perChannel = channels.map(({ decl }, c) => {
      const shared = new Map<string, Stage>();
      // A file narrower than the declared converter steps at its own codes (a note says so).
      const bits = effectiveBits(decl.bits, r);
      // The most negative code is −1 of full scale, the most positive one step short of +1 (a negative scale swaps them), a
      // step of the converter: 24-bit codes in a 32-bit container end a 24-bit step short.
      // Floating-point samples declaring bits and range: the converter's codes span the range, the top one a step short.
      const grid = declaredGrid(r.normalised, bits, decl.range, decl.offset, r.encoding);
      const ends = r.normalised && bits ? [-decl.scale + decl.offset, (1 - 2 ** (1 - bits)) * decl.scale + decl.offset]
        : grid && decl.range ? [decl.range[0], decl.range[1] - grid.step] : null;
      const fullScale: [number, number] | null = ends && [Math.min(ends[0], ends[1]), Math.max(ends[0], ends[1])];
      // One context a feature group, shared by the group's stages: each stage's notes, rows and flags are filed under its
      // own feature group, and a recording makes a few contexts a channel, not one a stage (they live as long as it does).
      const contexts = new Map<string, ChannelContext>();
      const contextOf = (group: string): ChannelContext => {
        const known = contexts.get(group);
        if (known) return known;
        const g = outputOf(group);
        const ctx: ChannelContext = {
          name: decl.name, quantity: decl.quantity, unit: decl.unit, sampleRate: r.sampleRate, range: decl.range, bits, bitsFromFile: bits != null && bits !== decl.bits,
          maxFrequencyHz: decl.max_frequency_hz,
          noiseFloor: decl.noise_floor ?? null,
          aliasFreeFraction: decl.alias_free_fraction ?? null,
          // One converter step in engineering units: full scale ±1 spans 2^bits codes.
          stepSize: r.normalised && bits ? Math.abs(decl.scale) / 2 ** (bits - 1) : null,
          fullScale,
          declaredGrid: grid,
          declared: job.channels != null,
          declaredDurationS: job.durationS,
          timeSteps: () => r.timeSteps ?? null,
          shared: <T extends Stage>(key: string, make: () => T) => (shared.get(key) ?? shared.set(key, make()).get(key)) as T,
          note: (m) => { if (!g.notes.includes(m)) g.notes.push(m); },
          // Packed into the group's columns as it comes: no object kept a row (the recording, channel and unit are added as the tables are written).
          addRow: (table, row) => ((g.tables[table] ??= new PackedRows()) as PackedRows).add(c, row),
          rowAppender: (table, names) => {
            const rows = (g.tables[table] ??= new PackedRows()) as PackedRows, columns = rows.columnsOf(names);
            return (values) => rows.addValues(c, columns, values);
          },
          flag: (f) => g.flags[c].push(f),
          evidence: (name, make) => offers[c].set(name, make),
          tacho: decl.pulses_per_rev ? { pulsesPerRev: decl.pulses_per_rev, triggerLevel: decl.trigger_level ?? null, triggerHysteresis: decl.trigger_hysteresis ?? null } : null,
          tachoChannels,
          recordingShared: <T>(key: string, make: () => T) => (recordingShared.has(key) ? recordingShared.get(key) : recordingShared.set(key, make()).get(key)) as T,
          keep: (name, value) => { ((g.kept ??= {})[name] ??= channels.map(() => null))[c] = value; },
          scratch,
        };
        contexts.set(group, ctx);
        return ctx;
      };
      const own = stages.filter((s) => selected(s.only, decl)).map((s) => ({ group: s.definition.group, stage: s.definition.create(contextOf(s.definition.group), s.options) }));
      // Shared products (made while the stages were created) are fed first, so every stage reads them complete.
      return { shared: [...shared.values()], own };
    });
    // One chunk in engineering units, reused: the hot loop allocates nothing.
    let engineering: Float64Array = new Float64Array(0);
    let frames = 0;
    for await (const chunk of rec.chunks()) {
      const n = chunk[0].length;
      if (engineering.length < n) engineering = scratch(n);
      const eng = n === engineering.length ? engineering : engineering.subarray(0, n);
      for (let c = 0; c < channels.length; c++) {
        const { decl, index } = channels[c];
        toEngineering(chunk[index], decl.scale, decl.offset, eng);
        const { shared, own } = perChannel[c];
        for (let s = 0; s < shared.length; s++) shared[s].push(eng);
        for (let s = 0; s < own.length; s++) own[s].stage.push(eng);
      }
      frames += n;
      onProgress();
    }
    if (frames === 0) throw noSamples();
    perChannel.forEach(({ own }, c) => {
      for (const { group, stage } of own) Object.assign(outputOf(group).columns[c], stage.finish());
      onProgress();
    });
    // The pictures' data are kept only for channels whose flags ask for a second look; the report draws the few it shows.
    const quality = out.groups.quality;
    if (quality) {
      // With a flag's spectral severity too: the spec's spectral sections may change while the stored result stays.
      quality.evidence = quality.flags.map((flags, c) => NEEDS_A_LOOK.has(worst(flags.flatMap((f) => [f.severity, f.spectral?.severity ?? 'ok'])))
        ? { data: packEvidence(Object.fromEntries([...offers[c]].map(([k, make]) => [k, make()])) as unknown as Evidence) }
        : null);
    }
    out.base = {
      frames, sampleRate: r.sampleRate,
      header: { format: r.format, encoding: r.encoding, bits: r.bits, start_time: r.startTime?.toISOString() ?? null },
      channels: channels.map(({ decl }) => ({ name: decl.name, quantity: decl.quantity, unit: decl.unit })),
      notes: [...opened.notes, ...r.notes],
    };
    out.status = 'reduced';
  } catch (e) {
    out.groups = {};
    out.reason = e instanceof RecordingError ? e.message : `unexpected error: ${(e as Error).stack ?? e}; please report it with the file`;
    if (!(e instanceof RecordingError) && (e as NodeJS.ErrnoException).code) out.reason = `${(e as Error).message}; check that the file exists and is readable`;
  } finally {
    await rec?.close();
    buffers.give(lent);
    out.seconds = (performance.now() - t0) / 1000;
  }
  return out;
}

/** Reduces and assembles in one step (every group, nothing reused). */
export async function reduceRecording(job: RecordingJob): Promise<RecordingResult> {
  return assembleRecording(await computeRecording(job), job.labels, job.spec);
}
