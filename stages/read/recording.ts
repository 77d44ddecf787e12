// What every reader hands the pipeline: a header read up front, then the samples in bounded chunks.

export type Format = 'wav' | 'csv' | 'raw';

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
  /** Channel names carried by the file itself (CSV headers); null when it has none. */
  channelNames: string[] | null;
  /** Yields one Float64Array per channel per chunk; arrays may be reused after the next step. */
  chunks(): AsyncGenerator<Float64Array[]>;
  /** Findings made while reading (irregular time steps…), complete once chunks() has ended. */
  notes: string[];
  /** For files with a time column: its irregular steps, complete once chunks() has ended. */
  timeSteps?: { irregular: number; widest_s: number; widest_at_s: number; nominal_s: number };
  close(): Promise<void>;
}

/** A recording that cannot be read as it stands; the message says where and what to do. */
export class RecordingError extends Error {
  override name = 'RecordingError';
}

export const DEFAULT_CHUNK_FRAMES = 65536;
