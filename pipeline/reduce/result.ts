// What reducing a recording yields: per feature group in the worker (the unit of caching), then assembled into rows.
import type { ColumnValues, KeptValue } from '../../stages/stage.js';
import type { Flag, Severity } from '../../stages/quality/flag.js';
import type { PackedRows } from '../../stages/packed-rows.js';
import type { ColumnsInPack } from '../store/record.js';

export type FeatureRow = Record<string, string | number | null>;

/**
 * A group's rows of one secondary table: packed columns, the row objects of entries stored before, or, read back for the
 * outputs, where a long table's columns lie in its pack.
 */
export type SecondaryRows = PackedRows | FeatureRow[] | ColumnsInPack;

export interface ChannelQuality { channel: string; unit: string; severity: Severity; flags: Flag[] }

/** What one feature group made for one recording: per channel (in channel order) its columns, flags and pictures' data. */
export interface GroupOutput {
  columns: ColumnValues[];
  flags: Flag[][];
  evidence: (Record<string, unknown> | null)[];
  /**
   * Rows of secondary tables (windows.parquet…), by table name: packed, each row's channel an index into the recording's
   * channels; entries stored before hold row objects (with recording, channel and unit).
   */
  tables: Record<string, SecondaryRows>;
  notes: string[];
  /** Compact values kept per channel (ctx.keep), by name: stored with the entry, never assembled into rows. */
  kept?: Record<string, (KeptValue | null)[]>;
}

/** One group's rows of a secondary table, with the recording and channels its packed rows' channel indices name. */
export interface SecondarySource { rows: SecondaryRows; recording: string; channels: { name: string; unit: string }[] }

/** A source's rows as objects: recording, channel and unit, then the values (the key order rows were stored in before). */
export function rowObjects(s: SecondarySource, to: FeatureRow[] = []): FeatureRow[] {
  if (Array.isArray(s.rows)) { for (const row of s.rows) to.push(row); return to; }
  if (!('row' in s.rows)) throw new Error(`${s.recording}: the rows of a table left in its pack are read by the outputs alone`);
  const p = s.rows;
  for (const [c, from, end] of p.channelRuns()) {
    const { name, unit } = s.channels[c];
    for (let i = from; i < end; i++) to.push({ recording: s.recording, channel: name, unit, ...p.row(i) });
  }
  return to;
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
  /** Rows of secondary tables (windows.parquet…), by table name, as objects: made when first read (tests, small uses). */
  tables: Record<string, FeatureRow[]>;
  /** The same rows as the groups hold them, by table name: what the outputs read, a column at a time. */
  secondary: Record<string, SecondarySource[]>;
  /** Quality flags per channel, with the pictures' data for channels that are not ok. */
  quality: ChannelQuality[];
  frames: number;
  sampleRate: number | null;
  /** How the file stores its samples, once its header was read. */
  header?: { format: string; encoding: string; bits: number | null; start_time: string | null };
  seconds: number;
}
