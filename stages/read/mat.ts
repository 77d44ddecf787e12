// MAT-file reader (level 5, as MATLAB saves with -v6 and -v7, compressed or not; -v7.3 files are HDF5, mat73.ts): the group declares
// the variable(s) holding the samples, the channel axis, and the variables holding the sample rate and start time. Samples
// are read as they are asked for, each channel from its own place in the file, so memory does not grow with the recording.
// A compressed variable several channels read from (columns as channels, fields of one struct) is inflated once into a
// temporary file first (mat-spool.ts), removed when the recording closes. Finding the variables: mat-file.ts.
import { basename } from 'node:path';
import { level5, readMatFile, type ChannelSource, type MatVariables } from './mat-file.js';
import { isMat4, readMat4File } from './mat4.js';
import { namesFrom } from './setting-values.js';
import { isMat73, openMat73 } from './mat73.js';
import { channelLayout, className, CLASS_BITS, isVectorDims, MX, TYPE_BYTES, type ArrayHeader } from './mat-element.js';
import { decodeInto, normaliserOf } from './mat-values.js';
import { nominalStep, rateFromStep, startOfTimes, TIME_PROBE, type VectorRate } from './time-steps.js';
import { framesOfTimes, timeVectorReader } from './time-vector.js';
import { MOST_LOST_ROWS, vectorIndices } from './lost-rows.js';
import { boundedChunkFrames, checkChannelCount, DEFAULT_CHUNK_FRAMES, RecordingError, withStart, type Recording } from './recording.js';
import { DECLARE_IN_ARCHIVE } from './declare-how.js';

/** How a group's MAT-files hold their recordings. */
export interface MatLayout {
  /** One variable holding every channel, or one vector per channel (in channel order); "name" or "struct.field". */
  variables: string[];
  /** For one two-dimensional variable: 0 when its rows are channels, 1 when its columns are (MATLAB's usual samples × channels). */
  channel_axis: 0 | 1 | null;
  /** Variable holding the sample rate in Hz (a number). */
  sample_rate_variable: string | null;
  /** Variable holding the start time: ISO 8601 or datestr text, or a number of POSIX seconds or a datenum. */
  start_time_variable: string | null;
  /** Variable holding each sample's time in seconds (a vector as long as the channels): the sample rate from its steps, irregular ones counted. */
  time_variable?: string | null;
  /** Variable holding the channels' names (a cell array of text, or a char matrix of one name a row): declared channels are then found by name. */
  channel_names_variable?: string | null;
}

/** One variable of a recording's one-per-channel list: a vector as long as the first and of its class. */
function checkVector(s: { header: ArrayHeader; where: string }, first: { where: string }, frames: number, cls: number): void {
  if (!isVectorDims(s.header.dims)) throw new RecordingError(`${s.where} is ${s.header.dims.join(' × ')}; with one variable per channel each must be a vector`);
  if (s.header.count !== frames) throw new RecordingError(`${s.where} holds ${s.header.count} samples but ${first.where} holds ${frames}; the channels of one recording must be equally long`);
  // A recording has one encoding, converter width and full scale, fixed before the other variables are read (check reads headers only).
  if (s.header.cls !== cls) throw new RecordingError(`${s.where} is ${className(s.header.cls)} but ${first.where} is ${className(cls)}; quern reads the channels of one recording in one class (their encoding, bits and full scale are the recording's), so they must share one: save them in one class (in MATLAB, double() or single() on each before saving)`);
}

/** Times as stored: no full scale applies to seconds. */
const AS_STORED = { scale: 1, shift: 0 };
/** The nominal step of a time vector's first TIME_PROBE values, and its first time, after checking it has one time a frame. */
async function timeStepOf(m: MatVariables, path: string, frames: number, where: string): Promise<VectorRate & { first: number }> {
  const t = await m.sourceAt(path, 'time', where, 0);
  try {
    if (!isVectorDims(t.header.dims) || t.header.count !== frames) throw new RecordingError(`${t.where} (the time) is ${t.header.dims.join(' × ')}; it must be a vector of ${frames} times, one for each frame; correct ${where}`);
    const k = Math.min(frames, TIME_PROBE), size = TYPE_BYTES[t.type];
    const bytes = t.inline ? t.inline.subarray(0, k * size) : await t.cursor.take(k * size, 'its first times', new Uint8Array(new ArrayBuffer(k * size)));
    const probe = new Float64Array(k);
    decodeInto(bytes.byteOffset % 8 === 0 ? bytes : new Uint8Array(bytes), t.type, m.little, k, probe, 0, 1, AS_STORED);
    return { ...nominalStep(probe, t.where, where), first: probe[0] };
  } finally { t.cursor.close(); }
}

/** Where each source starts: a variable and the index of its first value, and how many channels it interleaves. */
interface SourcePlan { variable: string; first: number; width: number }

export async function openMat(path: string, layout: MatLayout | null, declaredSampleRate: number | null, { chunkFrames = DEFAULT_CHUNK_FRAMES, declareHow = DECLARE_IN_ARCHIVE, mostLostRows = MOST_LOST_ROWS } = {}): Promise<Recording> {
  if (await isMat73(path)) return openMat73(path, layout ?? { variables: [], channel_axis: null, sample_rate_variable: null, start_time_variable: null }, declaredSampleRate, { chunkFrames, declareHow, mostLostRows });
  const m = (await isMat4(path)) ? await readMat4File(path) : level5(await readMatFile(path));
  const sources: ChannelSource[] = [], extra: ChannelSource[] = [];
  try {
    const where = declareHow.where;
    if (!layout || layout.variables.length === 0) throw new RecordingError(`a MAT-file needs to be told which variables hold the samples; ${declareHow.mat}; ${m.holds()}`);
    const first = await m.sourceAt(layout.variables[0], 'samples', where['mat.variables'], 0);
    first.cursor.close();
    const cls = first.header.cls;
    let channels: number, frames: number;
    let plan: SourcePlan[];
    // For a matrix read by its declared channel axis: the channels its other axis would hold.
    let otherAxis: number | null = null;
    if (layout.variables.length === 1) {
      const held = channelLayout(first.header.dims, layout.channel_axis, first.where, where['mat.channel_axis']);
      ({ channels, frames } = held);
      if (held.by !== 'vector') otherAxis = frames;
      if (held.by === 'vector') plan = [{ variable: layout.variables[0], first: 0, width: 1 }];
      // Rows as channels: MATLAB stores arrays column by column, so each frame's channels lie side by side.
      else if (held.by === 'rows') plan = [{ variable: layout.variables[0], first: 0, width: channels }];
      else {
        // Columns as channels: each channel's samples lie together, so each channel reads from its own place.
        checkChannelCount(channels, first.where);
        plan = Array.from({ length: channels }, (_, c) => ({ variable: layout.variables[0], first: c * frames, width: 1 }));
      }
    } else {
      // The other variables are looked at as their samples are first asked for: fields of one compressed struct are
      // inflated once then, so that check and --since, which read headers only, do not inflate the whole struct.
      channels = layout.variables.length;
      checkChannelCount(channels, where['mat.variables']);
      frames = first.header.count;
      plan = layout.variables.map((variable) => ({ variable, first: 0, width: 1 }));
      checkVector(first, first, frames, cls);
    }
    m.readBy(plan.map((p) => p.variable));
    checkChannelCount(channels, first.where);
    if (frames === 0) throw new RecordingError(`${first.where} holds no samples (${first.header.dims.join(' × ')})`);
    const times = layout.time_variable ? await timeStepOf(m, layout.time_variable, frames, where['mat.time_variable']) : null;
    const fromTime = times == null ? null : rateFromStep(times, declaredSampleRate, `variable "${layout.time_variable}"`, where.sample_rate);
    const fromVariable = layout.sample_rate_variable ? await m.sampleRateOf(layout.sample_rate_variable, where['mat.sample_rate_variable']) : null;
    const sampleRate = fromVariable ?? fromTime ?? declaredSampleRate;
    if (sampleRate == null) throw new RecordingError(`${first.where}: no sample rate; set ${where.sample_rate}, ${where['mat.sample_rate_variable']} or ${where['mat.time_variable']}`);
    // A time vector in a compressed element the channels read from too is inflated once with them (after its first times are probed).
    if (layout.time_variable) m.readBy([...plan.map((p) => p.variable), layout.time_variable]);
    // A declared start variable, else a time vector of POSIX seconds.
    const startTime = layout.start_time_variable ? await m.startTimeOf(layout.start_time_variable, where['mat.start_time_variable']) : times && startOfTimes(times.first);
    const namesAt = layout.channel_names_variable;
    let channelNames: string[] | null;
    // Names that do not fit fail the recording, which its start still places in a period.
    try { channelNames = namesAt ? namesFrom(await m.channelNamesOf(namesAt, where['mat.channel_names_variable']), channels, `variable "${namesAt}"`, where['mat.channel_names_variable']) : null; } catch (e) { throw withStart(e, startTime); }
    const norm = normaliserOf(cls);
    const integer = cls in CLASS_BITS;
    // The channels of one recording share one class; the stored type may differ between variables, and is at most 8 bytes.
    const interleaved = plan[0].width > 1;
    const chunk = boundedChunkFrames(chunkFrames, channels, 8 * channels + (interleaved ? 8 * channels : 0));

    const timePlaces = () => vectorIndices(`variable "${layout!.time_variable}" (the time)`, basename(path));
    /** The time vector's values alone, a chunk at a time (closed with the recording). */
    async function* timeBlocks(): AsyncGenerator<Float64Array> {
      const time = await m.sourceAt(layout!.time_variable!, 'time', where['mat.time_variable'], 0);
      extra.push(time);
      const size = TYPE_BYTES[time.type], scratch = new Uint8Array(new ArrayBuffer(chunk * size)), held = new Float64Array(chunk);
      for (let start = 0; start < frames; start += chunk) {
        const n = Math.min(chunk, frames - start);
        const bytes = time.inline ? time.inline.subarray(start * size, (start + n) * size) : await time.cursor.take(n * size, `times ${start} to ${start + n}`, scratch);
        decodeInto(bytes.byteOffset % 8 === 0 ? bytes : new Uint8Array(bytes), time.type, m.little, n, held, 0, 1, AS_STORED);
        yield held.subarray(0, n);
      }
    }
    async function* chunks(): AsyncGenerator<Float64Array[]> {
      for (const p of plan) {
        const s = await m.sourceAt(p.variable, 'samples', where['mat.variables'], p.first);
        sources.push({ ...s, width: p.width });
        if (layout!.variables.length > 1) checkVector(s, first, frames, cls);
      }
      // The time vector is read beside the samples, its steps counted; it is closed with them, but is no channel.
      const time = times == null ? null : await m.sourceAt(layout!.time_variable!, 'time', where['mat.time_variable'], 0);
      if (time) extra.push(time);
      // Its steps are held as it is read; the samples it says were lost are missing samples in their places.
      const timed = times && timeVectorReader(times, channels, chunk, timePlaces(), mostLostRows);
      const held = time ? new Float64Array(chunk) : null;
      const out = Array.from({ length: channels }, () => new Float64Array(chunk));
      // Scratch at offset 0 of its own buffer, so that stored values can be viewed as typed arrays in place.
      const scratch = new Uint8Array(new ArrayBuffer(chunk * Math.max(...[...sources, ...extra].map((s) => TYPE_BYTES[s.type] * s.width))));
      const block = interleaved ? new Float64Array(chunk * channels) : null;
      for (let start = 0; start < frames; start += chunk) {
        const n = Math.min(chunk, frames - start);
        for (let s = 0; s < sources.length; s++) {
          const src = sources[s], size = TYPE_BYTES[src.type] * src.width;
          const bytes = src.inline ? src.inline.subarray(start * size, (start + n) * size) : await src.cursor.take(n * size, `samples ${start} to ${start + n}`, scratch);
          const aligned = bytes.byteOffset % 8 === 0 ? bytes : new Uint8Array(bytes);
          if (!block) { decodeInto(aligned, src.type, m.little, n, out[s], 0, 1, norm); continue; }
          decodeInto(aligned, src.type, m.little, n * channels, block, 0, 1, norm);
          for (let c = 0; c < channels; c++) {
            const into = out[c];
            for (let i = 0, at = c; i < n; i++, at += channels) into[i] = block[at];
          }
        }
        if (time && timed && held) {
          const size = TYPE_BYTES[time.type];
          const bytes = time.inline ? time.inline.subarray(start * size, (start + n) * size) : await time.cursor.take(n * size, `times ${start} to ${start + n}`, scratch);
          decodeInto(bytes.byteOffset % 8 === 0 ? bytes : new Uint8Array(bytes), time.type, m.little, n, held, 0, 1, AS_STORED);
          yield* timed.place(out, held, n, start);
          continue;
        }
        yield n === chunk ? out : out.map((a) => a.subarray(0, n));
      }
      if (timed) { yield* timed.end(); timed.keep(recording); }
    }
    const recording: Recording = {
      format: 'mat', channelCount: channels, sampleRate, frames,
      encoding: cls === MX.DOUBLE ? 'float64' : cls === MX.SINGLE ? 'float32' : className(cls), bits: integer ? CLASS_BITS[cls].bits : null, normalised: integer,
      startTime, channelNames, notes: [], chunks, close: () => m.close([...sources, ...extra]),
      ...(times ? { framesOfTimes: () => framesOfTimes(times, timeBlocks(), timePlaces(), mostLostRows) } : {}),
      ...(otherAxis != null ? { otherAxis: { channels: otherAxis, where: where['mat.channel_axis'] } } : {}),
    };
    return recording;
  } catch (e) {
    await m.close([...sources, ...extra]);
    throw e;
  }
}
