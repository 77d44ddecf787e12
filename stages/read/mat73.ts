// MAT-files of version 7.3 (MATLAB's save -v7.3) are HDF5 behind a 512-byte MAT header (HDF5's user block): each variable
// a dataset at its name ("/data"; a struct's field "/rec/acc_x"), its dimensions in reverse of MATLAB's, its class in the
// attribute MATLAB_class, text as uint16 character codes. The declaration is read in MATLAB's terms here, and the samples
// through the HDF5 reader.
import { open } from 'node:fs/promises';
import { firstLine, onceMore, openHdf5 } from './hdf5.js';
import { rethrowStop, takeTurn, type H5 } from './hdf5-library.js';
import type { MatLayout } from './mat.js';
import { namesFrom, rateFrom, scalar, startFrom } from './setting-values.js';
import { channelLayout, charCodesText, charMatrixRows, heldText, isVectorDims } from './mat-element.js';
import { MAX_CHANNELS, RecordingError, withStart, type Recording } from './recording.js';
import type { DeclareHow } from './declare-how.js';

const HDF5_SIGNATURE = Buffer.from([0x89, 0x48, 0x44, 0x46, 0x0d, 0x0a, 0x1a, 0x0a]);

/** Whether the file is HDF5 behind a 512-byte user block, as version 7.3 MAT-files are. */
export async function isMat73(path: string): Promise<boolean> {
  const f = await open(path, 'r');
  try {
    const b = Buffer.alloc(8);
    const { bytesRead } = await f.read(b, 0, 8, 512);
    return bytesRead === 8 && b.equals(HDF5_SIGNATURE);
  } finally { await f.close(); }
}

const NUMERIC = ['double', 'single', 'int8', 'uint8', 'int16', 'uint16', 'int32', 'uint32', 'int64', 'uint64'];
const datasetOf = (variable: string) => `/${variable.split('.').join('/')}`;

type HdfFile = InstanceType<H5['File']>;

/** Runs one call into the library: what HDF5 refuses in a damaged file becomes a reason, a stop passes on to be retried. */
function guard<T>(doing: string, call: () => T): T {
  try { return call(); } catch (e) {
    rethrowStop(e);
    if (e instanceof RecordingError) throw e;
    throw new RecordingError(`${doing} failed: ${firstLine(e)}; the file is damaged: copy it again`);
  }
}
interface Variable { name: string; cls: string | null; dims: number[]; value: () => unknown; /** The first k values of a vector. */ first: (k: number) => ArrayLike<number | bigint> }

function classOf(obj: { attrs: Record<string, { value: unknown }> }): string | null {
  try { const v = obj.attrs.MATLAB_class?.value; return v == null ? null : String(v); } catch (e) { rethrowStop(e); return null; }
}

/** What the file's top level holds, in MATLAB's terms, for messages. */
function listing(file: HdfFile): string {
  return guard('listing the variables', () => listingOf(file));
}
function listingOf(file: HdfFile): string {
  return heldText(file.keys().filter((k) => !k.startsWith('#')), (k) => {
    const obj = file.get(k) as unknown as { attrs: Record<string, { value: unknown }>; shape?: number[] } | null;
    return obj ? `${k} (${classOf(obj) ?? 'unknown class'}${obj.shape ? ` ${[...obj.shape].reverse().join(' × ')}` : ''})` : k;
  }, 'no variables');
}

function variableOf(file: HdfFile, name: string, what: string, where: string): Variable {
  return guard(`reading variable "${name}"`, () => variableIn(file, name, what, where));
}
function variableIn(file: HdfFile, name: string, what: string, where: string): Variable {
  let obj;
  try { obj = file.get(datasetOf(name)); } catch (e) { rethrowStop(e); obj = null; }
  if (!obj) throw new RecordingError(`variable "${name}" (the ${what}) is not in the file; ${listing(file)}; correct ${where} or check the file`);
  const cls = classOf(obj as never);
  if (obj.constructor.name !== 'Dataset') throw new RecordingError(`variable "${name}" is a ${cls ?? 'group'}, not an array; name one of its fields ("${name}.field") in ${where}`);
  const ds = obj as InstanceType<H5['Dataset']>;
  const shape = ds.shape ?? [];
  const first = (k: number) => guard(`reading variable "${name}"`, () => ds.slice((shape.length === 1 ? [[0, k]] : shape[0] === 1 ? [[], [0, k]] : [[0, k], []]) as never) as unknown as ArrayLike<number | bigint>);
  return { name, cls, dims: [...shape].reverse(), value: () => guard(`reading variable "${name}"`, () => ds.value), first };
}

/** One number, or one line of text (char arrays are uint16 codes). */
function valueOf(v: Variable, what: string): number | string {
  const value = v.value() as ArrayLike<number | bigint> | number | string;
  if (v.cls === 'char') return charCodesText(value as ArrayLike<number>).trim();
  if (v.cls != null && !NUMERIC.includes(v.cls)) throw new RecordingError(`variable "${v.name}" is a ${v.cls} array; the ${what} is one number or one line of text`);
  const count = v.dims.reduce((a, b) => a * b, 1);
  if (count !== 1) throw new RecordingError(`variable "${v.name}" holds ${v.dims.join(' × ')} values; the ${what} is one number`);
  const x = typeof value === 'object' ? (value as ArrayLike<number | bigint>)[0] : value;
  return typeof x === 'string' ? x : Number(x);
}

/** Whether MATLAB marked the array empty (it then stores its dimensions as the values). */
function isEmpty(obj: { attrs: Record<string, { value: unknown }> }): boolean {
  try { return obj.attrs.MATLAB_empty != null && Number(scalar(obj.attrs.MATLAB_empty.value)) !== 0; } catch (e) { rethrowStop(e); return false; }
}

/** Channel names: a cell array (references to char arrays under #refs#, one a cell), or a char matrix of one name a row. */
function namesOf(file: HdfFile, v: Variable, where: string): string[] {
  if (v.cls === 'char') return charMatrixRows(charCodesText(v.value() as ArrayLike<number>), v.dims[0], v.dims[1] ?? 1);
  if (v.cls !== 'cell') throw new RecordingError(`variable "${v.name}" is a ${v.cls ?? 'unknown class of'} array; the channel names are a cell array of text ({'acc_x', 'acc_y'}) or a char matrix of one name a row; correct ${where}`);
  if (!isVectorDims(v.dims)) throw new RecordingError(`variable "${v.name}" is a ${v.dims.join(' × ')} cell array; the channel names are one row or column of cells; correct ${where}`);
  const refs = Array.from(v.value() as ArrayLike<unknown>);
  if (refs.length > MAX_CHANNELS) throw new RecordingError(`variable "${v.name}" holds ${refs.length} cells, more than the ${MAX_CHANNELS} channels a recording may have; check the file or ${where}`);
  return refs.map((ref, i) => guard(`reading cell ${i + 1} of variable "${v.name}"`, () => {
    const cell = file.dereference(ref as never) as unknown as { attrs: Record<string, { value: unknown }>; shape?: number[]; value: unknown } | null;
    const cls = cell ? classOf(cell) : null;
    if (!cell || cls !== 'char' || !cell.shape || !isVectorDims(cell.shape)) throw new RecordingError(`cell ${i + 1} of variable "${v.name}" is ${cls ? `a ${cls} array` : 'no array'}, not one line of text; correct ${where}`);
    return isEmpty(cell) ? '' : charCodesText(cell.value as ArrayLike<number>).trim();
  }));
}

interface Facts { channelAxis: 0 | 1 | null; rate: number | string | null; start: number | string | null; names: string[] | null }

/** Checks the samples' variables in MATLAB's terms and reads the sample rate and start time. */
function readFacts(h5: H5, path: string, layout: MatLayout, declareHow: DeclareHow): Facts {
  const where = declareHow.where;
  let file: HdfFile;
  try { file = new h5.File(path, 'r'); } catch (e) { rethrowStop(e); throw new RecordingError(`the version 7.3 MAT-file (HDF5) cannot be opened: ${String((e as Error)?.message ?? e).split('\n')[0].slice(0, 200)}; the file is damaged or cut short: copy it again`); }
  try {
    if (layout.variables.length === 0) throw new RecordingError(`a MAT-file needs to be told which variables hold the samples; ${declareHow.mat}; ${listing(file)}`);
    const samples = layout.variables.map((name) => variableOf(file, name, 'samples', where['mat.variables']));
    for (const v of samples) if (v.cls != null && !NUMERIC.includes(v.cls)) throw new RecordingError(`variable "${v.name}" is a ${v.cls} array; the samples must be numbers (double, single or an integer class)`);
    let channelAxis: 0 | 1 | null = null;
    if (samples.length === 1) {
      const { by } = channelLayout(samples[0].dims, layout.channel_axis, `variable "${samples[0].name}"`, where['mat.channel_axis']);
      // MATLAB's columns are HDF5's rows.
      channelAxis = by === 'columns' ? 0 : by === 'rows' ? 1 : null;
    } else {
      for (const v of samples) if (!isVectorDims(v.dims)) throw new RecordingError(`variable "${v.name}" is ${v.dims.join(' × ')}; with one variable per channel each must be a vector`);
    }
    const rate = layout.sample_rate_variable ? valueOf(variableOf(file, layout.sample_rate_variable, 'sample rate', where['mat.sample_rate_variable']), 'sample rate') : null;
    const start = layout.start_time_variable ? valueOf(variableOf(file, layout.start_time_variable, 'start time', where['mat.start_time_variable']), 'start time') : null;
    const namesAt = layout.channel_names_variable;
    const names = namesAt ? guard(`reading variable "${namesAt}"`, () => namesOf(file, variableOf(file, namesAt, 'channel names', where['mat.channel_names_variable']), where['mat.channel_names_variable'])) : null;
    return { channelAxis, rate, start, names };
  } finally {
    try { file.close(); } catch { /* an instance that stopped cannot close; it is set aside */ }
  }
}

/** The HDF5 reader's messages name the MAT declaration's keys. */
const asHdf5 = (d: DeclareHow): DeclareHow => ({
  ...d, hdf5: d.mat,
  where: { ...d.where, 'hdf5.datasets': d.where['mat.variables'], 'hdf5.channel_axis': d.where['mat.channel_axis'], 'hdf5.sample_rate_attribute': d.where['mat.sample_rate_variable'], 'hdf5.start_time_attribute': d.where['mat.start_time_variable'],
    // The HDF5 reader's other sources of the rate and the start time are, in a MAT-file, the time vector and the variable.
    'hdf5.sample_rate_dataset': d.where['mat.sample_rate_variable'], 'hdf5.start_time_dataset': d.where['mat.start_time_variable'],
    'hdf5.time_dataset': d.where['mat.time_variable'] },
});
/** The error in MATLAB's terms, keeping the start read before it. */
const said = (e: unknown) => (e instanceof RecordingError ? withStart(new RecordingError(`version 7.3 MAT-file (HDF5): ${e.message}`), e.startTime) : e);

export async function openMat73(path: string, layout: MatLayout, declaredSampleRate: number | null, { chunkFrames, declareHow, mostLostRows }: { chunkFrames: number; declareHow: DeclareHow; mostLostRows: number }): Promise<Recording> {
  // A declared start variable, once read: a failure after it still places the recording in a period by it.
  let startTime: Date | null = null;
  try {
    const release = await takeTurn();
    let facts: Facts;
    try { facts = await onceMore((h5) => readFacts(h5, path, layout, declareHow), 'reading the variables'); } finally { release(); }
    const where = declareHow.where;
    const rate = facts.rate != null ? rateFrom(facts.rate, `variable "${layout.sample_rate_variable}"`, where['mat.sample_rate_variable']) : declaredSampleRate;
    startTime = facts.start == null ? null : startFrom(facts.start, `variable "${layout.start_time_variable}"`, where['mat.start_time_variable']);
    // A time vector is read by the HDF5 reader beside the samples: the rate from its steps, irregular ones counted, samples lost placed.
    const time = layout.time_variable ? { time_dataset: datasetOf(layout.time_variable) } : {};
    const timeHeld = layout.time_variable ? `variable "${layout.time_variable}" (the time)` : '';
    const rec = await openHdf5(path, { datasets: layout.variables.map(datasetOf), channel_axis: facts.channelAxis, sample_rate_attribute: null, start_time_attribute: null, ...time }, rate, { chunkFrames, declareHow: asHdf5(declareHow), mostLostRows, timeHeld });
    // The HDF5 reader's own recording, so that what it finds while reading (the time steps, notes) stays on it.
    const samples = rec.chunks;
    let channelNames: string[] | null;
    // The recording holds the HDF5 library's turn until it closes: closed here when its names do not fit it.
    try { channelNames = facts.names && namesFrom(facts.names, rec.channelCount, `variable "${layout.channel_names_variable}"`, where['mat.channel_names_variable']); } catch (e) { await rec.close(); throw e; }
    return Object.assign(rec, {
      // A declared start variable, else what the HDF5 reader found (a time vector of POSIX seconds).
      format: 'mat' as const, startTime: startTime ?? rec.startTime, channelNames,
      async *chunks(): AsyncGenerator<Float64Array[]> { try { yield* samples(); } catch (e) { throw said(e); } },
    });
  } catch (e) {
    throw withStart(said(e), startTime);
  }
}
