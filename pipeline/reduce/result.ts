// What reducing a recording yields: per feature group in the worker (the unit of caching), then assembled into rows.
import type { ColumnValues, KeptValue } from '../../stages/stage.js';
import type { Flag, Severity } from '../../stages/quality/flag.js';

export type FeatureRow = Record<string, string | number | null>;

export interface ChannelQuality { channel: string; unit: string; severity: Severity; flags: Flag[] }

/** What one feature group made for one recording: per channel (in channel order) its columns, flags and pictures' data. */
export interface GroupOutput {
  columns: ColumnValues[];
  flags: Flag[][];
  evidence: (Record<string, unknown> | null)[];
  /** Rows of secondary tables (windows.parquet…), by table name. */
  tables: Record<string, FeatureRow[]>;
  notes: string[];
  /** Compact values kept per channel (ctx.keep), by name: stored with the entry, never assembled into rows. */
  kept?: Record<string, (KeptValue | null)[]>;
}

/** Everything a reduction learnt about a recording, by feature group: the unit of caching and of sharding. */
export interface RecordingOutput {
  recording: string;
  group: string;
  status: 'reduced' | 'failed';
  reason?: string;
  base: {
    frames: number;
    sampleRate: number;
    header: { format: string; encoding: string; bits: number | null; start_time: string | null };
    channels: { name: string; quantity: string; unit: string }[];
    /** Findings of the reader (irregular time steps…). */
    notes: string[];
  } | null;
  groups: Record<string, GroupOutput>;
  seconds: number;
  /** A failure because the file changed while it was read: the next run reads it again, whatever it then finds. */
  readAgain?: true;
}

/** A recording's assembled result: the rows and tables it contributes and its quality verdict. */
export interface RecordingResult {
  recording: string;
  group: string;
  status: 'reduced' | 'failed';
  /** Why the recording failed: what, where, and what to do. */
  reason?: string;
  /** Findings that did not stop the reduction. */
  messages: string[];
  rows: FeatureRow[];
  /** Rows of secondary tables (windows.parquet…), by table name. */
  tables: Record<string, FeatureRow[]>;
  /** Quality flags per channel, with the pictures' data for channels that are not ok. */
  quality: ChannelQuality[];
  frames: number;
  sampleRate: number | null;
  /** How the file stores its samples, once its header was read. */
  header?: { format: string; encoding: string; bits: number | null; start_time: string | null };
  seconds: number;
}
