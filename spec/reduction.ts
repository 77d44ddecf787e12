// reduction.yaml as quern reads it: what to compute. Types only, read by the run and by the stages alike.
import type { FilterSpec } from '../stages/dsp/butterworth.js';
import type { WelchOptions } from '../stages/dsp/welch.js';
import type { QualitySpec } from '../stages/quality/flag.js';

export interface ChannelSelector { names?: string[]; quantities?: string[] }
type Only = { only?: ChannelSelector };
type Ranges = [number, number][];
/** reduction.yaml, as schemas/reduction.schema.json describes it. */
export interface ReductionSpec {
  statistics?: Only;
  spectrum?: Partial<WelchOptions> & Only;
  bands?: Ranges | ({ ranges: Ranges } & Only);
  octave_bands?: OctaveSet | OctaveSet[];
  velocity_bands?: Ranges | ({ ranges: Ranges } & Only);
  windows?: { length_s?: number; hop_s?: number } & Only;
  time_weighting_s?: number[] | ({ constants_s: number[] } & Only);
  mtvv?: { integration_s?: number } & Only;
  envelope?: { filter: FilterSpec; min_prominence_db?: number } & Only;
  sound_level?: Only;
  rainflow?: { slope?: number; gate?: number; bins?: { range_width?: number; mean_width?: number } } & Only;
  orders?: { orders?: number[]; width?: number; min_rpm?: number } & Only;
  quality?: QualitySpec;
  trends?: TrendsSpec;
}

/** A feature's absolute limits, in its unit. */
export interface FeatureLimits { warn?: number; alarm?: number }

/** A channel's baseline formed again from a date on (a sensor replaced): the first `first` usable recordings from `from`. */
export interface BaselineRestartSpec { channel: string; group?: string; from: string; first?: number }

/** Section `trends`: each watched feature of each recording against its channel's baseline (defaults in schemas/reduction.schema.json). */
export interface TrendsSpec {
  /** Feature columns to watch, by name or glob; those the spec does not compute are passed over. */
  features?: string[];
  /** The first N usable recordings of each group × channel by start time, or the recordings starting in [from, until); `exclude` leaves recordings out by name or glob. */
  baseline?: ({ first: number } | { from: string; until: string }) & { exclude?: string[]; restart?: BaselineRestartSpec[] };
  /** |level change| in dB beyond which a level-like feature has changed. */
  change_db?: number;
  /** |robust z-score| beyond which a feature has changed. */
  score?: number;
  /** Least spread the score divides by, as a fraction of |baseline median|. */
  spread_floor?: number;
  /** Fraction of each threshold by which a changed or alarm verdict must fall back before it clears. */
  deadband?: number;
  /**
   * Absolute limits per feature, in the feature's unit: at or above `warn` at least changed, at or above `alarm` alarm. For
   * every channel with the feature, or as a list, per channel (the first entry whose channel and group name it).
   */
  limits?: Record<string, FeatureLimits | (FeatureLimits & { channel?: string; group?: string })[]>;
}
type OctaveSet = { fraction?: 1 | 3; from?: number; to?: number; levels_db?: boolean } & Only;
