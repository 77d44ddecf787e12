// Turns scanned recordings into self-contained jobs: everything a worker needs, as plain data.
import type { ChannelDeclaration, GroupDeclaration } from '../../spec/archive.js';
import type { ReductionSpec } from '../../spec/reduction.js';
import type { RawLayout } from '../../stages/read/raw.js';
import type { ReaderOptions } from '../../stages/read/open.js';
import type { Format } from '../../stages/read/recording.js';
import type { ScannedRecording } from '../select/scan.js';

export interface RecordingJob {
  recording: string;
  path: string;
  group: string;
  format: Format | null;
  sampleRate: number | null;
  layout: RawLayout | null;
  /** Per-format reading options (HDF5 datasets and attributes, MAT-file variables, FLAC start-time tag), when the group declares them. */
  reader?: ReaderOptions;
  channels: ChannelDeclaration[] | null;
  labels: Record<string, string>;
  durationS: number | null;
  spec: ReductionSpec;
  /** Feature groups to compute; null for all of them. */
  groups?: string[] | null;
  chunkFrames: number;
}

export interface PlanOptions { chunkFrames?: number }

/** The reading options a group declares for its format (HDF5 datasets, MAT-file variables, FLAC start-time tag): wherever its files are opened. */
export const readerOptionsOf = (g: GroupDeclaration): ReaderOptions => ({ hdf5: g.hdf5, mat: g.mat, flac: g.flac });

/** The job of one scanned recording. */
export function planJob(r: ScannedRecording, groups: GroupDeclaration[], spec: ReductionSpec, { chunkFrames = 65536 }: PlanOptions = {}): RecordingJob {
  const g = groups[r.group];
  return {
    recording: r.recording, path: r.path, group: g.name, format: g.format, sampleRate: g.sample_rate,
    // A frame takes at least a byte, so a small file fits one chunk of its size in bytes: no large buffers for small files.
    layout: g.layout, reader: readerOptionsOf(g), channels: g.channels, labels: g.labels, durationS: g.duration_s, spec, chunkFrames: Math.max(1, Math.min(chunkFrames, r.size)),
  };
}

export const plan = (recordings: ScannedRecording[], groups: GroupDeclaration[], spec: ReductionSpec, o: PlanOptions = {}): RecordingJob[] =>
  recordings.map((r) => planJob(r, groups, spec, o));
