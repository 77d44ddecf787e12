// HDF5 reader (h5wasm: the HDF5 C library compiled to WebAssembly, reading the file where it lies): the group declares
// the dataset(s), the channel axis, and the attributes holding the sample rate and start time; samples are read as
// hyperslabs of a bounded number of frames.
import { closeSync, openSync } from 'node:fs';
import { open } from 'node:fs/promises';
import { basename } from 'node:path';
import { heldText } from './mat-element.js';
import { boundedChunkFrames, checkChannelAxis, checkChannelCount, DEFAULT_CHUNK_FRAMES, RecordingError, withStart, type Recording } from './recording.js';
import { DECLARE_IN_ARCHIVE, type DeclareHow } from './declare-how.js';
import { namesFrom, rateFrom, scalar, startFrom } from './setting-values.js';
import { nominalStep, rateFromStep, startOfTimes, TIME_PROBE, type VectorRate } from './time-steps.js';
import { framesOfTimes, timeVectorReader } from './time-vector.js';
import { MOST_LOST_ROWS, vectorIndices } from './lost-rows.js';
import { h5wasm, libraryStopped, rethrowStop, setAside, takeTurn, type H5 } from './hdf5-library.js';
import { missingFilter, missingFilterMessage, type PipelineFilter } from './hdf5-filters.js';
import { attributeTypeOf, readerOf, storedTypeOf, type ReadAt, type StoredType } from './hdf5-stored-type.js';
import { fillsStorage, fullScaleOf, integerOf } from './hdf5-integers.js';

/** How a group's HDF5 files hold their recordings. */
export interface Hdf5Layout {
  /** One dataset holding every channel, or one dataset per channel (in channel order). */
  datasets: string[];
  /** For one two-dimensional dataset: the axis that counts channels (0: rows are channels; 1: columns are channels). */
  channel_axis: 0 | 1 | null;
  /** Attribute holding the sample rate in Hz: a name looked up on the dataset and then its enclosing groups, or "/path@name". */
  sample_rate_attribute: string | null;
  /** Attribute holding the start time: an ISO 8601 string, or POSIX seconds (or MATLAB's datenum or datestr). Same lookup. */
  start_time_attribute: string | null;
  /** Dataset holding the sample rate as its one value, instead of an attribute (present only when declared). */
  sample_rate_dataset?: string | null;
  /** Dataset holding the start time as its one value (ISO 8601 text or POSIX seconds; or MATLAB's datenum or datestr), instead of an attribute. */
  start_time_dataset?: string | null;
  /** Dataset holding each frame's time in seconds, as long as the channels: the sample rate from its steps, irregular ones counted. */
  time_dataset?: string | null;
  /** Attribute holding the channels' names, an array of text in channel order, or each dataset's own name (same lookup): declared channels are then found by name. */
  channel_names_attribute?: string | null;
}

type Dataset = InstanceType<H5['Dataset']>;
type HdfFile = InstanceType<H5['File']>;

/** Most bytes one stored chunk may have: HDF5 decompresses a chunk whole before taking a hyperslab from it. */
const MAX_STORED_CHUNK_BYTES = 256 * 1024 * 1024;

// HDF5 format signature (HDF5 File Format Specification, superblock): at byte 0, 512, 1024, 2048, … of the file.
// Returns where the superblock starts, or null.
const SIGNATURE = Buffer.from([0x89, 0x48, 0x44, 0x46, 0x0d, 0x0a, 0x1a, 0x0a]);
async function signatureAt(path: string): Promise<number | null> {
  const f = await open(path, 'r');
  try {
    const size = (await f.stat()).size;
    const b = Buffer.alloc(8);
    for (let at = 0; at + 8 <= size && at <= 1 << 20; at = at === 0 ? 512 : at * 2) {
      await f.read(b, 0, 8, at);
      if (b.equals(SIGNATURE)) return at;
    }
    return null;
  } finally {
    await f.close();
  }
}

/** The root cause from HDF5's error stack: its deepest entry's message ("truncated file: eof = …"), without source paths. */
export function firstLine(e: unknown): string {
  const text = String((e as Error)?.message ?? e);
  const causes = [...text.matchAll(/#\d+: .*? in (\w+)\(\): (.*)$/gm)].map((m) => m[2].trim());
  return (causes.at(-1) ?? text.split('\n').map((l) => l.trim()).find(Boolean) ?? 'unknown error').slice(0, 300);
}

/** Finds an attribute: "/path@name" exactly, or "name" on the object and then each enclosing group up to the root. */
function findAttribute(file: HdfFile, from: string, spec: string, what: string, where: string, bytes: FileBytes | null = null): unknown {
  const at = spec.lastIndexOf('@');
  const places = at >= 0 ? [spec.slice(0, at) || '/'] : from.split('/').filter(Boolean).map((_, i, parts) => `/${parts.slice(0, parts.length - i).join('/')}`).concat('/');
  const name = at >= 0 ? spec.slice(at + 1) : spec;
  for (const place of places) {
    let obj;
    try { obj = file.get(place); } catch (e) { rethrowStop(e); obj = null; }
    if (!obj || !('attrs' in obj)) continue;
    const attrs = (obj as { attrs: Record<string, { value: unknown; metadata: { type: number; size: number } }> }).attrs;
    if (Object.prototype.hasOwnProperty.call(attrs, name)) {
      let value: unknown, type: number;
      try { ({ value } = attrs[name]); type = attrs[name].metadata.type; } catch (e) { rethrowStop(e); throw new RecordingError(`attribute "${name}" of "${place}" (the ${what}) cannot be read: ${firstLine(e)}`); }
      // An integer narrower than its storage is taken from its bits, as a dataset's are.
      return bytes && type === 0 ? integerAttribute(obj as unknown as Dataset, place, name, value, bytes) : value;
    }
  }
  throw new RecordingError(`attribute "${name}" (the ${what}) is not on ${at >= 0 ? `"${places[0]}"` : `dataset "${from}" or its groups`}; correct ${where} or check the file`);
}

/**
 * An integer attribute's values by its stored type (h5wasm hands over the storage word, as for datasets: `hdf5-integers.ts`);
 * as h5wasm gives them where the file holds no such attribute message (the header's, or dense storage's).
 */
function integerAttribute(obj: Dataset, place: string, name: string, value: unknown, bytes: FileBytes): unknown {
  let t: StoredType | null;
  try { t = attributeTypeOf(bytes.read, bytes.superblock, obj.create_reference().ref_data, name); } catch (e) {
    rethrowStop(e);
    throw new RecordingError(`attribute "${name}" of "${place}": its stored type cannot be read: ${e instanceof RecordingError ? e.message : firstLine(e)}`);
  }
  if (t == null || t.cls !== 0 || fillsStorage(t)) return value;
  if (t.precision < 1 || t.offset + t.precision > 8 * t.size) throw new RecordingError(`attribute "${name}" of "${place}": its integers claim ${t.precision} bits from bit ${t.offset} of ${8 * t.size}-bit storage; the file is damaged: copy it again`);
  const of = integerOf(t);
  if (typeof value === 'number' || typeof value === 'bigint') return of(value);
  return ArrayBuffer.isView(value) ? Array.from(value as unknown as ArrayLike<number | bigint>, (w) => of(w)) : value;
}

/** Names an attribute holds: an array of text (one text for one channel). */
function namesIn(value: unknown, held: string, where: string): string[] {
  const list = typeof value === 'string' ? [value] : Array.isArray(value) ? value : null;
  if (!list || list.some((v) => typeof v !== 'string')) throw new RecordingError(`${held} (the channel names) holds ${ArrayBuffer.isView(value) ? 'numbers' : typeof value}, not text; the channel names are an array of text; correct ${where}`);
  return list.map((n: string) => n.trim());
}

/**
 * The channels' names: with one dataset a channel, each one's own attribute where each holds one name; else the array of
 * names the (first) dataset's attribute holds.
 */
function namesOf(file: HdfFile, sources: Source[], spec: string, where: string): string[] {
  const held = `attribute "${spec}"`;
  if (sources.length > 1) {
    const each = sources.map((s) => scalar(findAttribute(file, s.path, spec, 'channel names', where)));
    if (each.every((v) => typeof v === 'string')) return (each as string[]).map((n) => n.trim());
  }
  return namesIn(findAttribute(file, sources[0].path, spec, 'channel names', where), held, where);
}

/** Objects a listing of the file's datasets looks at, at most: a file of thousands is named in part. */
const LISTING_LOOKS = 2000;

/** The datasets the file holds, by path with their shape, for a message naming one that is not there (as MAT-files list their variables). */
function datasetsHeld(file: HdfFile): string {
  const found: { path: string; shape: number[] }[] = [];
  const queue: { path: string; group: any }[] = [{ path: '', group: file }];
  let looked = 0;
  try {
    while (queue.length && looked < LISTING_LOOKS) {
      const { path, group } = queue.shift()!;
      for (const name of group.keys() as string[]) {
        if (++looked > LISTING_LOOKS) break;
        const obj = group.get(name), at = `${path}/${name}`;
        if (obj?.constructor.name === 'Group') queue.push({ path: at, group: obj });
        else if (obj?.constructor.name === 'Dataset') found.push({ path: at, shape: (obj as Dataset).shape ?? [] });
      }
    }
  } catch (e) { rethrowStop(e); }
  return heldText(found, (d) => `${d.path} (${d.shape.join(' × ') || 'one value'})`, 'no dataset');
}

/** The one value of a dataset that holds a setting (the sample rate, the start time) rather than samples. */
function datasetValue(file: HdfFile, path: string, what: string, where: string, bytes: FileBytes): unknown {
  let obj;
  try { obj = file.get(path); } catch (e) { rethrowStop(e); throw new RecordingError(`dataset "${path}" (the ${what}) cannot be opened: ${firstLine(e)}; check ${where} or the file`); }
  if (!obj) throw new RecordingError(`dataset "${path}" (the ${what}) is not in the file; ${datasetsHeld(file)}; correct ${where} or check the file`);
  if (obj.constructor.name !== 'Dataset') throw new RecordingError(`"${path}" (the ${what}) is a ${obj.constructor.name}, not a dataset; correct ${where}`);
  const ds = obj as Dataset;
  try {
    const count = (ds.shape ?? []).reduce((a: number, b: number) => a * b, 1);
    if (count !== 1) throw new RecordingError(`dataset "${path}" (the ${what}) holds ${count} values (${(ds.shape ?? []).join(' × ')}); it must hold one; correct ${where}`);
    const m = ds.metadata, v = scalar(ds.value);
    // An integer narrower than its storage is taken from its bits, as samples are.
    if (m.type === 0 && (typeof v === 'number' || typeof v === 'bigint')) return integerOf(storedTypeOfDataset(ds, m, path, bytes))(v);
    if (m.type === 1) storedTypeOfDataset(ds, m, path, bytes);
    return v;
  } catch (e) { rethrowStop(e); if (e instanceof RecordingError) throw e; throw new RecordingError(`dataset "${path}" (the ${what}) cannot be read: ${firstLine(e)}; the file is damaged`); }
}

/** A dataset's values: its integers' precision and bit offset (the whole storage for floats), each stored word as a number. */
interface Source { ds: Dataset; path: string; shape: number[]; type: number; size: number; signed: boolean; precision: number; offset: number; value: (word: number | bigint) => number }

/** The file's bytes, for the stored types: the superblock's place and positioned reads. */
interface FileBytes { superblock: number; read: ReadAt }

// IEEE 754 binary32 and binary64 as HDF5 describes them (H5T_IEEE_F32LE, H5T_IEEE_F64LE): sign bit, exponent place and
// size, mantissa place and size, bias, implied leading mantissa bit (normalisation 2).
const IEEE: Record<number, NonNullable<StoredType['float']> & { precision: number }> = {
  4: { precision: 32, sign: 31, expAt: 23, expBits: 8, mantAt: 0, mantBits: 23, bias: 127, order: 0, norm: 2 },
  8: { precision: 64, sign: 63, expAt: 52, expBits: 11, mantAt: 0, mantBits: 52, bias: 1023, order: 0, norm: 2 },
};
const isIeee = (t: StoredType) => {
  const want = IEEE[t.size], f = t.float;
  return !!want && !!f && t.offset === 0 && t.precision === want.precision && f.sign === want.sign && f.expAt === want.expAt && f.expBits === want.expBits
    && f.mantAt === want.mantAt && f.mantBits === want.mantBits && f.bias === want.bias && (f.order === 0 || f.order === 1) && f.norm === want.norm;
};
/** A stored type in words: "int24 in 32-bit storage", "uint12 in 16-bit storage from bit 4", "int16", "float32". */
const typeName = (t: Pick<Source, 'type' | 'size' | 'signed' | 'precision' | 'offset'>) => (t.type === 1 ? `float${8 * t.size}`
  : `${t.signed ? 'int' : 'uint'}${t.precision}${t.precision === 8 * t.size ? '' : ` in ${8 * t.size}-bit storage`}${t.offset ? ` from bit ${t.offset}` : ''}`);

/**
 * The dataset's stored type, read from its object header (h5wasm's description has no precision or bit offset), held
 * against h5wasm's: integers of any precision are read, floats only as IEEE binary32 and binary64.
 */
function storedTypeOfDataset(ds: Dataset, m: { type: number; size: number; signed: boolean; littleEndian: boolean }, path: string, bytes: FileBytes): StoredType {
  let t: StoredType;
  try { t = storedTypeOf(bytes.read, bytes.superblock, ds.create_reference().ref_data); } catch (e) {
    rethrowStop(e);
    throw new RecordingError(`dataset "${path}": its stored type cannot be read: ${e instanceof RecordingError ? e.message : firstLine(e)}`);
  }
  if (t.cls !== m.type || t.size !== m.size || (t.cls === 0 && (t.signed !== m.signed || t.bigEndian === m.littleEndian))) {
    throw new RecordingError(`dataset "${path}": its type reads as class ${t.cls} of ${t.size} bytes from its header but as class ${m.type} of ${m.size} bytes through the HDF5 library; the file is damaged: copy it again`);
  }
  if (t.cls === 0 && (t.precision < 1 || t.offset + t.precision > 8 * t.size)) {
    throw new RecordingError(`dataset "${path}": its integers claim ${t.precision} bits from bit ${t.offset} of ${8 * t.size}-bit storage; the file is damaged: copy it again`);
  }
  if (t.cls === 1 && !isIeee(t)) {
    const f = t.float!;
    throw new RecordingError(`dataset "${path}" holds ${8 * t.size}-bit floats that are not IEEE 754 (${t.precision} bits from bit ${t.offset}, sign bit ${f.sign}, ${f.expBits}-bit exponent at bit ${f.expAt}, bias ${f.bias}, ${f.mantBits}-bit mantissa, ${f.order === 3 ? 'VAX' : f.order === 1 ? 'big-endian' : 'little-endian'}); quern reads IEEE float32 and float64: convert the dataset (in h5py, f["${path}"][...].astype("float64")) and save it again`);
  }
  return t;
}

/** `fileName` names the file in the advice for a dataset the library cannot decompress. */
function datasetOf(file: HdfFile, path: string, where: string, fileName: string, bytes: FileBytes): Source {
  let obj;
  try { obj = file.get(path); } catch (e) { rethrowStop(e); throw new RecordingError(`dataset "${path}" cannot be opened: ${firstLine(e)}; check ${where} or the file`); }
  if (!obj) throw new RecordingError(`dataset "${path}" is not in the file; ${datasetsHeld(file)}; check ${where}`);
  if (obj.constructor.name !== 'Dataset') throw new RecordingError(`"${path}" is a ${obj.constructor.name}, not a dataset; name the dataset in ${where}`);
  const ds = obj as Dataset;
  let m;
  try { m = ds.metadata; } catch (e) { rethrowStop(e); throw new RecordingError(`dataset "${path}": its description cannot be read: ${firstLine(e)}; the file is damaged`); }
  const shape = m.shape ?? [];
  // HDF5 type classes: 0 integer, 1 float.
  if (!((m.type === 0 && [1, 2, 4, 8].includes(m.size)) || (m.type === 1 && (m.size === 4 || m.size === 8))) || m.vlen) {
    throw new RecordingError(`dataset "${path}" holds ${m.type === 0 ? `${m.size}-byte integers` : m.type === 1 ? `${m.size}-byte floats` : `values of HDF5 type class ${m.type}`}; quern reads integers of 1, 2, 4 or 8 bytes and 32- or 64-bit floats`);
  }
  if (m.chunks && m.chunks.reduce((a, b) => a * b, m.size) > MAX_STORED_CHUNK_BYTES) {
    throw new RecordingError(`dataset "${path}" is stored in chunks of ${m.chunks.join(' × ')} values, over ${MAX_STORED_CHUNK_BYTES >> 20} MiB each; rewrite it with smaller chunks (h5repack -l CHUNK=…)`);
  }
  // A filter the library lacks fails only when a chunk is read, and then as a missing plugin folder: refused here, in check too.
  let filters: PipelineFilter[];
  try { filters = m.chunks ? ds.filters : []; } catch (e) { rethrowStop(e); throw new RecordingError(`dataset "${path}": its filters cannot be read: ${firstLine(e)}; the file is damaged`); }
  const missing = missingFilter(filters);
  if (missing) throw new RecordingError(missingFilterMessage(path, fileName, missing));
  const t = storedTypeOfDataset(ds, m, path, bytes);
  return { ds, path, shape, type: m.type, size: m.size, signed: m.signed, precision: t.precision, offset: t.offset, value: m.type === 0 ? integerOf(t) : Number };
}

/** Integers are normalised to ±1 of their precision's full scale (unsigned ones as offset binary), as the raw reader does. */
function normaliser(s: Source): (v: number | bigint) => number {
  if (s.type === 1) return (v) => v as number;
  return fullScaleOf(s);
}

/** A dataset that is one run of samples: one-dimensional, or two-dimensional with one side 1 (N × 1, 1 × N). */
const isVector = (shape: number[]) => shape.length === 1 || (shape.length === 2 && (shape[0] === 1 || shape[1] === 1));
/** The hyperslab of samples [start, end) of such a dataset. */
const vectorRanges = (shape: number[], rows: [number, number]) => (shape.length === 1 ? [rows] : shape[0] === 1 ? [[] as [], rows] : [rows, [] as []]);

/** A file opened on an instance: its datasets found and checked against the layout. */
interface Opened { h5: H5; file: HdfFile; sources: Source[]; channels: number; frames: number; axis: 0 | 1; /** Set for one two-dimensional dataset read by its declared channel axis. */ byAxis: boolean; sampleRate: number; startTime: Date | null; channelNames: string[] | null; /** The time dataset and its nominal step, when declared. */ time: Source | null; times: VectorRate | null }

const closeQuietly = (file: HdfFile) => { try { file.close(); } catch { /* an instance that stopped cannot close; it is set aside */ } };

/** `superblock`: where the file's superblock starts (behind a user block in a MAT-file of version 7.3). */
function openOn(h5: H5, path: string, layout: Hdf5Layout, declaredSampleRate: number | null, declareHow: DeclareHow, superblock: number): Opened {
  const where = declareHow.where;
  let file: HdfFile;
  try {
    file = new h5.File(path, 'r');
    if ((file as unknown as { file_id: bigint }).file_id < 0n) throw new Error('the library could not open it');
  } catch (e) {
    rethrowStop(e);
    throw new RecordingError(`the HDF5 file cannot be opened: ${firstLine(e)}; the file is damaged or cut short: copy it again`);
  }
  // The stored types are read from the file's bytes beside the library, while the datasets are found.
  const fd = openSync(path, 'r');
  const bytes: FileBytes = { superblock, read: readerOf(fd) };
  try {
    const sources = layout.datasets.map((d) => datasetOf(file, d, where['hdf5.datasets'], basename(path), bytes));
    const first = sources[0];
    let channels: number, frames: number, axis: 0 | 1, byAxis = false;
    if (sources.length === 1) {
      if (first.shape.length === 1) { channels = 1; frames = first.shape[0]; axis = 1; }
      // N × 1 or 1 × N: one channel, whichever way it lies and whatever axis is declared (as a MAT-file's vector).
      else if (isVector(first.shape)) { axis = first.shape[0] === 1 ? 0 : 1; channels = 1; frames = first.shape[1 - axis]; }
      else if (first.shape.length === 2) {
        if (layout.channel_axis == null) throw new RecordingError(`dataset "${first.path}" has two axes (${first.shape.join(' × ')}); set ${where['hdf5.channel_axis']} to 0 if its rows are channels, 1 if its columns are`);
        axis = layout.channel_axis;
        checkChannelAxis(first.shape[0], first.shape[1], axis, `dataset "${first.path}"`, where['hdf5.channel_axis']);
        channels = first.shape[axis];
        frames = first.shape[1 - axis];
        byAxis = true;
      } else throw new RecordingError(`dataset "${first.path}" has ${first.shape.length} axes (${first.shape.join(' × ')}); quern reads one axis of samples and at most one of channels`);
    } else {
      for (const s of sources) {
        if (!isVector(s.shape)) throw new RecordingError(`dataset "${s.path}" has ${s.shape.length} axes (${s.shape.join(' × ')}); with one dataset per channel each must be one-dimensional (or N × 1)`);
        const length = s.shape.reduce((a, b) => a * b, 1), firstLength = first.shape.reduce((a, b) => a * b, 1);
        if (length !== firstLength) throw new RecordingError(`dataset "${s.path}" holds ${length} samples but "${first.path}" holds ${firstLength}; the channels of one recording must be equally long`);
        if (s.type !== first.type || s.size !== first.size || s.signed !== first.signed || s.precision !== first.precision || s.offset !== first.offset) throw new RecordingError(`dataset "${s.path}" holds ${typeName(s)} but "${first.path}" holds ${typeName(first)}; the channels of one recording must share one type`);
      }
      channels = sources.length; frames = first.shape.reduce((a, b) => a * b, 1); axis = 1;
    }
    checkChannelCount(channels, `dataset "${first.path}"`);
    const rateSpec = layout.sample_rate_attribute, rateSet = layout.sample_rate_dataset, timeSpec = layout.start_time_attribute, timeSet = layout.start_time_dataset;
    const fromFile = rateSpec ? rateFrom(findAttribute(file, first.path, rateSpec, 'sample rate', where['hdf5.sample_rate_attribute'], bytes), `attribute "${rateSpec}" of dataset "${first.path}"`, where['hdf5.sample_rate_attribute'])
      : rateSet ? rateFrom(datasetValue(file, rateSet, 'sample rate', where['hdf5.sample_rate_dataset'], bytes), `dataset "${rateSet}"`, where['hdf5.sample_rate_dataset']) : null;
    const time = layout.time_dataset ? timeDatasetOf(file, layout.time_dataset, frames, where['hdf5.time_dataset'], basename(path), bytes) : null;
    const times = time ? timeStepOf(time, frames, where['hdf5.time_dataset']) : null;
    const sampleRate = fromFile ?? (times != null ? rateFromStep(times, declaredSampleRate, `dataset "${time!.path}"`, where.sample_rate) : declaredSampleRate);
    if (sampleRate == null) {
      // Where the rate may be given, each place once (a MAT-file's reader names two of these by one key).
      const places = [...new Set([where.sample_rate, where['hdf5.sample_rate_attribute'], where['hdf5.sample_rate_dataset'], where['hdf5.time_dataset']])];
      throw new RecordingError(`dataset "${first.path}": no sample rate; set ${places.slice(0, -1).join(', ')} or ${places.at(-1)}`);
    }
    const startTime = timeSpec ? startFrom(findAttribute(file, first.path, timeSpec, 'start time', where['hdf5.start_time_attribute'], bytes), `attribute "${timeSpec}" of dataset "${first.path}"`, where['hdf5.start_time_attribute'])
      : timeSet ? startFrom(datasetValue(file, timeSet, 'start time', where['hdf5.start_time_dataset'], bytes), `dataset "${timeSet}"`, where['hdf5.start_time_dataset'])
        // Else a time dataset of POSIX seconds.
        : times && startOfTimes(times.first);
    const namesSpec = layout.channel_names_attribute, namesWhere = where['hdf5.channel_names_attribute'];
    let channelNames: string[] | null;
    // Names that do not fit fail the recording, which its start still places in a period.
    try { channelNames = namesSpec ? namesFrom(namesOf(file, sources, namesSpec, namesWhere), channels, `attribute "${namesSpec}" of dataset "${first.path}"`, namesWhere) : null; } catch (e) { throw withStart(e, startTime); }
    return { h5, file, sources, channels, frames, axis, byAxis, sampleRate, startTime, channelNames, time, times };
  } catch (e) {
    closeQuietly(file);
    throw e;
  } finally {
    closeSync(fd);
  }
}

/** A time dataset: one value a frame, as a vector. */
function timeDatasetOf(file: HdfFile, path: string, frames: number, where: string, fileName: string, bytes: FileBytes): Source {
  const t = datasetOf(file, path, where, fileName, bytes);
  const count = t.shape.reduce((a, b) => a * b, 1);
  if (!isVector(t.shape) || count !== frames) throw new RecordingError(`dataset "${path}" (the time) is ${t.shape.join(' × ')}; it must be a vector of ${frames} times, one for each frame; correct ${where}`);
  return t;
}

/** The nominal step of a time dataset's first TIME_PROBE values, and its first time. */
function timeStepOf(t: Source, frames: number, where: string): VectorRate & { first: number } {
  const k = Math.min(frames, TIME_PROBE);
  let values;
  try { values = t.ds.slice(vectorRanges(t.shape, [0, k]) as never) as unknown as ArrayLike<number | bigint>; } catch (e) { rethrowStop(e); throw new RecordingError(`dataset "${t.path}" (the time): its first values cannot be read: ${firstLine(e)}; the file is damaged: copy it again`); }
  const probe = Float64Array.from(values, t.value);
  return { ...nominalStep(probe, `dataset "${t.path}"`, where), first: probe[0] };
}

/** The message for a file that stopped a fresh instance too. */
const stoppedTwice = (doing: string, e: unknown) => `the HDF5 library stopped while ${doing} (${firstLine(e)}), and again on a fresh instance: the file is damaged; copy it again`;

/**
 * Runs `read` on the thread's instance; after a stop, sets that instance aside and runs `read` once more on a fresh one.
 * Only a second stop is the file's: it fails with a reason that says what the library was doing.
 */
export async function onceMore<T>(read: (h5: H5) => T, doing: string): Promise<T> {
  for (let attempt = 1; ; attempt++) {
    const h5 = await h5wasm();
    try { return read(h5); } catch (e) {
      if (!libraryStopped(e)) throw e;
      setAside(h5);
      if (attempt === 2) throw new RecordingError(stoppedTwice(doing, e));
    }
  }
}

export async function openHdf5(path: string, layout: Hdf5Layout | null, declaredSampleRate: number | null, { chunkFrames = DEFAULT_CHUNK_FRAMES, declareHow = DECLARE_IN_ARCHIVE, mostLostRows = MOST_LOST_ROWS, timeHeld = '' } = {}): Promise<Recording> {
  if (!layout || layout.datasets.length === 0) throw new RecordingError(`HDF5 needs to be told where its samples are; ${declareHow.hdf5}`);
  const hdf5 = layout;
  const superblock = await signatureAt(path);
  if (superblock == null) throw new RecordingError('byte 0: not an HDF5 file (no HDF5 signature at byte 0, 512, 1024, …); check the group\'s format or the file');
  const release = await takeTurn();
  try {
    let o = await onceMore((h5) => openOn(h5, path, hdf5, declaredSampleRate, declareHow, superblock), 'opening the file');
    const { channels, frames, axis, sampleRate, startTime } = o;
    const first = o.sources[0];
    const chunk = boundedChunkFrames(chunkFrames, channels);
    const norm = o.sources.map(normaliser);
    const integer = first.type === 0;
    /** Samples of one dataset; after a stop, the file is opened again on the fresh instance and the same samples read again. */
    /** Values [start, end) of one dataset (`pick` finds it in the opened file: a channel's, or the time dataset); after a stop, the file is opened again on the fresh instance and the same values read again. */
    const slice = (pick: (o: Opened) => Source, ranges: unknown, what: string, start: number, end: number) => onceMore((h5) => {
      if (o.h5 !== h5) o = openOn(h5, path, hdf5, declaredSampleRate, declareHow, superblock);
      try { return pick(o).ds.slice(ranges as never) as unknown as ArrayLike<number | bigint>; } catch (e) {
        rethrowStop(e);
        throw new RecordingError(`dataset "${pick(o).path}": ${what} ${start} to ${end} cannot be read: ${firstLine(e)}; the file is damaged: copy it again`);
      }
    }, `reading ${what} ${start} to ${end} of dataset "${pick(o).path}"`);
    const timePlaces = () => vectorIndices(timeHeld || `dataset "${o.time!.path}" (the time)`, basename(path));
    /** The time dataset's values, a chunk at a time. */
    async function* timeBlocks(): AsyncGenerator<Float64Array> {
      const times = new Float64Array(chunk);
      for (let start = 0; start < frames; start += chunk) {
        const n = Math.min(chunk, frames - start);
        const held = await slice((x) => x.time!, vectorRanges(o.time!.shape, [start, start + n]), 'times', start, start + n);
        const time = o.time!.value;
        for (let i = 0; i < n; i++) times[i] = time(held[i]);
        yield times.subarray(0, n);
      }
    }
    async function* chunks(): AsyncGenerator<Float64Array[]> {
      try {
        // A time dataset's steps are held as its values are read beside the samples; the samples it says were lost are missing samples.
        const timed = o.times && timeVectorReader(o.times, channels, chunk, timePlaces(), mostLostRows);
        const times = timed ? new Float64Array(chunk) : null;
        const out = Array.from({ length: channels }, () => new Float64Array(chunk));
        for (let start = 0; start < frames; start += chunk) {
          const n = Math.min(chunk, frames - start);
          const rows: [number, number] = [start, start + n];
          for (let s = 0; s < norm.length; s++) {
            const shape = o.sources[s].shape;
            const ranges = norm.length > 1 ? vectorRanges(shape, rows) : shape.length === 1 ? [rows] : axis === 1 ? [rows, [] as []] : [[] as [], rows];
            const block = await slice((x) => x.sources[s], ranges, 'samples', start, start + n);
            const f = norm[s];
            if (norm.length > 1) { for (let i = 0; i < n; i++) out[s][i] = f(block[i]); continue; }
            // Samples × channels (axis 1) interleave the channels; channels × samples (axis 0) hold each channel's run in turn.
            for (let c = 0; c < channels; c++) {
              const into = out[c];
              if (axis === 1) for (let i = 0, at = c; i < n; i++, at += channels) into[i] = f(block[at]);
              else for (let i = 0, at = c * n; i < n; i++, at++) into[i] = f(block[at]);
            }
          }
          if (timed && times) {
            // The time dataset's values for these frames, read as the samples are.
            const held = await slice((x) => x.time!, vectorRanges(o.time!.shape, rows), 'times', start, start + n);
            const time = o.time!.value;
            for (let i = 0; i < n; i++) times[i] = time(held[i]);
            yield* timed.place(out, times, n, start);
            continue;
          }
          yield n === chunk ? out : out.map((a) => a.subarray(0, n));
        }
        if (timed) { yield* timed.end(); timed.keep(recording); }
      } finally {
        // Its samples read (or not, after an error), the file no longer needs the instance: the next file may take its turn.
        release();
      }
    }
    const recording: Recording = {
      format: 'hdf5', channelCount: channels, sampleRate, frames,
      encoding: integer ? `${first.signed ? 'int' : 'uint'}${first.precision === 8 * first.size ? first.precision : `${first.precision}in${8 * first.size}`}${first.offset ? ` from bit ${first.offset}` : ''}` : `float${first.size * 8}`,
      // An integer's precision is its converter's codes: a 24-bit precision in 32-bit storage steps as 24 bits.
      bits: integer ? first.precision : null, normalised: integer,
      startTime, channelNames: o.channelNames, notes: [], chunks, close: async () => { closeQuietly(o.file); release(); },
      ...(o.times ? { framesOfTimes: () => framesOfTimes(o.times!, timeBlocks(), timePlaces(), mostLostRows) } : {}),
      ...(o.byAxis ? { otherAxis: { channels: frames, where: declareHow.where['hdf5.channel_axis'] } } : {}),
    };
    return recording;
  } catch (e) {
    release();
    throw e;
  }
}
