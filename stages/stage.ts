// The one shape every reduction stage has: created for a channel, fed chunks, finished into columns.
import type { ReductionSpec } from '../spec/reduction.js';
import type { TimeSteps } from './read/time-steps.js';
import type { Flag } from './quality/flag.js';
import type { DeclaredGrid } from './quality/float-grid.js';
import { freshBuffer } from './scratch.js';

/** What a stage knows about the channel it reduces, in engineering units. */
export interface ChannelContext {
  name: string;
  quantity: string;
  unit: string;
  sampleRate: number;
  /** Saturation limits of the instrument in engineering units, when declared. */
  range: [number, number] | null;
  /** Converter resolution in bits, when declared or known from the file. */
  bits: number | null;
  /** Whether `bits` is the file's (none declared, or a declared width its codes cannot hold) rather than the declaration's. */
  bitsFromFile?: boolean;
  /** Highest frequency the signal is declared to contain, Hz. */
  maxFrequencyHz: number | null;
  /** RMS of the measurement chain's own noise in engineering units, when declared (`noise_floor`). */
  noiseFloor?: number | null;
  /** The converter's alias-free bandwidth as a fraction of the sample rate, when declared (`alias_free_fraction`). */
  aliasFreeFraction?: number | null;
  /** Engineering value of one converter step (scale / 2^(bits-1) for PCM), when known. */
  stepSize: number | null;
  /**
   * Engineering values of the converter's most negative and most positive codes: integer formats, and floating-point samples
   * declaring bits and range (the range's ends, the top one a step short); else null.
   */
  fullScale: [number, number] | null;
  /**
   * Floating-point samples declaring bits and range: the declared converter's step, which the data must be seen to take
   * before the resolution flag judges by it (integer codes give `stepSize` instead); else absent or null.
   */
  declaredGrid?: DeclaredGrid | null;
  /** Whether the channel was declared in archive.yaml (else it is in stored units). */
  declared: boolean;
  /** Declared duration of the recording, s, if any. */
  declaredDurationS: number | null;
  /** Irregular steps of a time column, known once the recording has been read; null for files without one. */
  timeSteps(): TimeSteps | null;
  /** Raises a quality flag for this channel. */
  flag(f: Flag): void;
  /** Offers pictures' data for the quality report; asked for only when the channel is not ok. */
  evidence(name: string, make: () => unknown): void;
  /** A product several stages of this channel read (the Welch spectrum…): made once, fed each chunk once, before the stages. */
  shared<T extends Stage>(key: string, make: () => T): T;
  /** Records a finding about this channel; it goes to run.json with the recording. */
  note(message: string): void;
  /** Adds a row to a secondary table of the run (windows.parquet…). */
  addRow(table: string, row: Record<string, number | null>): void;
  /**
   * Adds rows of the named values, given in that order, to a secondary table: a row costs no object (millions of windows).
   * Absent outside a worker's reduction: `appenderOf` falls back on addRow.
   */
  rowAppender?(table: string, names: readonly string[]): (values: ArrayLike<number | null>) => void;
  /** The shaft-pulse declaration when this is a tacho channel (pulses_per_rev declared), else absent or null. */
  tacho?: TachoDeclaration | null;
  /** Names of the recording's channels declaring pulses_per_rev, known when stages are created; absent outside a recording. */
  tachoChannels?: readonly string[];
  /**
   * A product shared by all channels of the recording (a tacho channel's shaft speed…): made once, on first request, by any channel.
   * Publish into it when a stage is created; read it in finish(), when every channel has seen every chunk. Absent outside a recording.
   */
  recordingShared?<T>(key: string, make: () => T): T;
  /**
   * A zeroed working buffer of `length` doubles, lent for this recording only: taken back once the recording is reduced,
   * and given to a later one. Only for a stage's own working state, never for what it hands on (columns, rows, kept
   * values, evidence). Absent outside a worker's reduction: use `new Float64Array` then (`scratchOf`).
   */
  scratch?(length: number): Float64Array;
  /** Keeps a compact value with the recording's stored result (not a table row): read later from the cache, e.g. spectra for trends. */
  keep?(name: string, value: KeptValue): void;
}

/** What archive.yaml says about a tacho channel's pulses. */
export interface TachoDeclaration {
  pulsesPerRev: number;
  /** Trigger level and hysteresis width in engineering units; null: found from the signal. */
  triggerLevel: number | null;
  triggerHysteresis: number | null;
}

/** A compact value kept per channel with a recording's result: numbers and packed arrays (base64 text). */
export type KeptValue = Record<string, number | string | Float32Array>;

/** A column a stage contributes to features.parquet. */
export interface ColumnSpec {
  name: string;
  /** Unit of the values; "[unit]" means the channel's own unit (the row's `unit` column). */
  unit: string;
  description: string;
}

export type ColumnValues = Record<string, number | null>;

/** A running reduction over one channel. push() sees every sample exactly once, in order. */
export interface Stage {
  push(samples: Float64Array): void;
  finish(): ColumnValues;
}

/** The spec sections a stage may come from (quality and trends turn no stage on). */
export type SpecSection = Exclude<keyof ReductionSpec, 'quality' | 'trends'>;

/** A feature group: the columns it adds and how to start one for a channel. */
export interface StageDefinition<Options = unknown> {
  /** Feature group name, as used in the spec and in caching. */
  group: string;
  /**
   * The spec section it comes from, whose `only:` chooses its channels (statistics runs whatever the spec, under its own
   * `only:`; the orders' tacho part on the tacho channel whatever `orders.only` says); null for a stage no section turns on
   * or selects for (the shaft speed, the quality flags). The empty-selector notes walk these sections.
   */
  section: SpecSection | null;
  /** Whether its figures rest on the channel's shared Welch spectrum: a dropout that leaves that spectrum part of the recording is said of them. */
  spectral: boolean;
  columns(options: Options): ColumnSpec[];
  create(channel: ChannelContext, options: Options): Stage;
}

/** Adds rows of `names`' values, in that order, to `table`: packed as they come where the context can, else as row objects. */
export const appenderOf = (ctx: ChannelContext, table: string, names: readonly string[]): ((values: ArrayLike<number | null>) => void) =>
  ctx.rowAppender?.(table, names) ?? ((values) => ctx.addRow(table, Object.fromEntries(names.map((n, j) => [n, values[j]]))));

/** The channel's lender of working buffers: the recording's scratch where there is one, new buffers otherwise. */
export const scratchOf = (ctx: ChannelContext): ((length: number) => Float64Array) => ctx.scratch ?? freshBuffer;
