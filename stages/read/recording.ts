// What every reader hands the pipeline: a header read up front, then the samples in bounded chunks.
import type { TimeSteps } from './time-steps.js';

export type Format = 'wav' | 'csv' | 'raw' | 'flac' | 'hdf5' | 'mat';

export interface Recording {
  format: Format;
  channelCount: number;
  /** Samples per second per channel, from the header, the time column or the declaration. */
  sampleRate: number;
  /** Frames (one sample of every channel) in the file, when the header says; null for text files. */
  frames: number | null;
  /** How samples are stored, e.g. "pcm16", "float32", "text". */
  encoding: string;
  /** Bits of converter resolution carried by the file (integer PCM), else null. */
  bits: number | null;
  /** Whether stored values were normalised to ±1 of the integer full scale. */
  normalised: boolean;
  startTime: Date | null;
  /** Channel names carried by the file itself (CSV headers; HDF5 and MAT-file names where declared): declared channels are found by them. Null when it has none. */
  channelNames: string[] | null;
  /** Yields one Float64Array per channel per chunk; arrays may be reused after the next step. */
  chunks(): AsyncGenerator<Float64Array[]>;
  /** Findings made while reading (irregular time steps…), complete once chunks() has ended. */
  notes: string[];
  /** For one two-dimensional dataset or variable read by its declared channel axis: the channels its other axis would hold, and where that axis is declared. */
  otherAxis?: { channels: number; where: string };
  /** A time column whose header names no unit (`time`, `t`): its name, its numbers read as seconds on trust. */
  secondsAssumed?: string;
  /**
   * For files with a time vector (HDF5, MAT-files): the frames the chunks will come to, the samples its times say were lost
   * counted, read from the times alone; `frames` is what the file holds.
   */
  framesOfTimes?: () => Promise<number>;
  /** For files with a time column: its irregular steps, complete once chunks() has ended. */
  timeSteps?: TimeSteps;
  close(): Promise<void>;
}

/** A recording that cannot be read as it stands; the message says where and what to do. */
export class RecordingError extends Error {
  override name = 'RecordingError';
  /** The start the header gave before the file failed, where it gave one: a period places the recording by it all the same. */
  startTime: Date | null = null;
}

/** `e` with the start read before it was thrown (a RecordingError only: another error says nothing about the file's header). */
export function withStart(e: unknown, start: Date | null): unknown {
  if (e instanceof RecordingError && start && !e.startTime) e.startTime = start;
  return e;
}

export const DEFAULT_CHUNK_FRAMES = 65536;

/** Most channels a recording may have; a header claiming more is taken as damaged rather than allocated for. */
export const MAX_CHANNELS = 4096;

/** Bytes one chunk of decoded samples may take (8 per sample): chunks of very wide recordings hold fewer frames. */
export const CHUNK_BYTES = 32 * 1024 * 1024;

/** Frames per chunk so that `channels` decoded channels (and `frameBytes` stored bytes a frame) stay within CHUNK_BYTES. */
export function boundedChunkFrames(chunkFrames: number, channels: number, frameBytes = 0): number {
  return Math.max(1, Math.min(chunkFrames, Math.floor(CHUNK_BYTES / (8 * Math.max(1, channels) + frameBytes))));
}

/** Refuses channel counts no recording has, before anything is allocated for them. */
export function checkChannelCount(channels: number, where: string): void {
  if (!(channels >= 1)) throw new RecordingError(`${where}: the header says ${channels} channels; the header is damaged`);
  if (channels > MAX_CHANNELS) throw new RecordingError(`${where}: the header says ${channels} channels, more than the ${MAX_CHANNELS} quern reads; the header is damaged, or split the capture into files of fewer channels`);
}

/**
 * Refuses a two-dimensional array whose declared channel axis gives more channels than quern reads while its other axis
 * would not: the axis is most likely the wrong way round, which a "damaged header" would hide.
 */
export function checkChannelAxis(rows: number, columns: number, axis: 0 | 1, where: string, axisWhere: string): void {
  const [channels, other] = axis === 0 ? [rows, columns] : [columns, rows];
  const [along, across] = axis === 0 ? ['rows', 'columns'] : ['columns', 'rows'];
  if (channels > MAX_CHANNELS && other <= MAX_CHANNELS) {
    throw new RecordingError(`${where} is ${rows} × ${columns}: by channel axis ${axis} its ${channels} ${along} would be channels, more than the ${MAX_CHANNELS} quern reads, of ${other} sample${other === 1 ? '' : 's'} each; if its ${other} ${across} are the channels, set ${axisWhere} to ${1 - axis}`);
  }
}
