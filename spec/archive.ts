// archive.yaml as quern reads it: what the recordings are. Types only, read by the run and by the stages alike.
import type { FlacOptions } from '../stages/read/flac.js';
import type { Hdf5Layout } from '../stages/read/hdf5.js';
import type { MatLayout } from '../stages/read/mat.js';
import type { RawLayout } from '../stages/read/raw.js';
import type { Format } from '../stages/read/recording.js';

export interface ChannelDeclaration {
  name: string;
  quantity: string;
  unit: string;
  scale: number;
  offset: number;
  range: [number, number] | null;
  bits: number | null;
  max_frequency_hz: number | null;
  /** RMS of the measurement chain's own noise (sensor and converter), engineering units, when declared. */
  noise_floor?: number | null;
  /** The converter's alias-free bandwidth as a fraction of the sample rate (data sheet), when declared. */
  alias_free_fraction?: number | null;
  /** Shaft pulses per revolution of a tacho channel; its trigger level and hysteresis (engineering units) when declared, else found from the signal. */
  pulses_per_rev?: number;
  trigger_level?: number | null;
  trigger_hysteresis?: number | null;
}

export interface GroupDeclaration {
  name: string;
  match: string[];
  format: Format | null;
  sample_rate: number | null;
  labels: Record<string, string>;
  layout: RawLayout | null;
  /** Where HDF5 files hold their samples, rate and start time. */
  hdf5: Hdf5Layout | null;
  /** Where MAT-files hold their samples, rate and start time. */
  mat: MatLayout | null;
  /** How FLAC files are read (the Vorbis comment tag holding the start time). */
  flac: FlacOptions | null;
  channels: ChannelDeclaration[] | null;
  /** Expected length of each recording, s, when declared. */
  duration_s: number | null;
  /** How often the group's rig captures (a span such as 1d), when declared: a --since run names it quiet after that long without one. */
  capture_every: string | null;
  /**
   * The problems that make the group unusable (each as file:line: key: what to do), when it holds any: it still claims the
   * files its pattern matches, and each of them fails with these problems until archive.yaml is mended.
   */
  broken?: string[];
}

export interface ArchiveDeclaration {
  file: string;
  groups: GroupDeclaration[];
  /** What may be wrong without stopping a run (a quantity near one quern selects by, a unit its figures cannot convert). */
  notes?: string[];
  /** The line of archive.yaml each group starts on. */
  lines?: number[];
}
