// Picks the reader for a recording's format.
import { extname } from 'node:path';
import { openCsv } from './csv.js';
import { openFlac, type FlacOptions } from './flac.js';
import { openHdf5, type Hdf5Layout } from './hdf5.js';
import { openMat, type MatLayout } from './mat.js';
import { openRaw, type RawLayout } from './raw.js';
import { DEFAULT_CHUNK_FRAMES, RecordingError, type Format, type Recording } from './recording.js';
import { openWav } from './wav.js';
import { explainLink } from './explain-link.js';
import { explainName } from './explain-name.js';
import { formatOf } from './format-of.js';
import { requireRegularFile } from './regular-file.js';
import { DECLARE_IN_ARCHIVE, type DeclareHow } from './declare-how.js';

export { DECLARE_IN_ARCHIVE, type DeclareHow } from './declare-how.js';

export { formatOf } from './format-of.js';

/** Reading options that only some formats take, and where the user declares what the file cannot say. */
export interface ReaderOptions { hdf5?: Hdf5Layout | null; mat?: MatLayout | null; flac?: FlacOptions | null; declareHow?: DeclareHow }

export interface OpenOptions extends ReaderOptions {
  format?: Format | null;
  sampleRate?: number | null;
  layout?: RawLayout | null;
  chunkFrames?: number;
}

/** Opens a recording with the reader for its format; a link that leads nowhere is named with its target, a name not in UTF-8 as such. */
export async function openRecording(path: string, options: OpenOptions = {}): Promise<Recording> {
  try {
    requireRegularFile(path);
    return await openByFormat(path, options);
  } catch (e) {
    throw (await explainLink(path, e)) ?? explainName(path, e) ?? e;
  }
}

async function openByFormat(path: string, { format = null, sampleRate = null, layout = null, chunkFrames = DEFAULT_CHUNK_FRAMES, hdf5 = null, mat = null, flac = null, declareHow = DECLARE_IN_ARCHIVE }: OpenOptions = {}): Promise<Recording> {
  const f = format ?? formatOf(path);
  if (f === 'wav') return openWav(path, { chunkFrames });
  if (f === 'flac') return openFlac(path, { chunkFrames, options: flac });
  if (f === 'hdf5') return openHdf5(path, hdf5, sampleRate, { chunkFrames, declareHow });
  if (f === 'mat') return openMat(path, mat, sampleRate, { chunkFrames, declareHow });
  if (f === 'csv') return openCsv(path, { chunkFrames, declaredSampleRate: sampleRate, sampleRateWhere: declareHow.where.sample_rate });
  if (f === 'raw') {
    if (!layout || sampleRate == null) throw new RecordingError(`raw binary needs its layout and sample rate; ${declareHow.raw}`);
    return openRaw(path, layout, sampleRate, { chunkFrames });
  }
  throw new RecordingError(`cannot tell the format from the extension "${extname(path) || '(none)'}"; ${declareHow.format}`);
}
