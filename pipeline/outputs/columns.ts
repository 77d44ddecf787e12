// The columns every features.parquet row starts with, and the shape of a table's column: plain data, so describing a table loads no writer.
import type { ColumnSpec } from '../../stages/stage.js';

export type ColumnType = 'string' | 'float64' | 'int64' | 'timestamp_ms_utc';

export interface TableColumn extends ColumnSpec { type: ColumnType; nullable: boolean }

/** The identifying columns every features.parquet row starts with. */
export const IDENTITY_COLUMNS: TableColumn[] = [
  { name: 'recording', type: 'string', nullable: false, unit: '', description: 'Path of the recording relative to the archive root.' },
  { name: 'group', type: 'string', nullable: false, unit: '', description: 'Declaration group the recording belongs to.' },
  { name: 'channel', type: 'string', nullable: false, unit: '', description: 'Channel name.' },
  { name: 'quantity', type: 'string', nullable: false, unit: '', description: 'Measured quantity as declared.' },
  { name: 'unit', type: 'string', nullable: false, unit: '', description: 'Engineering unit of the channel; columns whose unit is "[unit]" are in it.' },
  { name: 'sample_rate', type: 'float64', nullable: false, unit: 'Hz', description: 'Samples per second per channel.' },
  { name: 'n', type: 'int64', nullable: false, unit: '1', description: 'Samples (frames) in the recording.' },
  { name: 'duration_s', type: 'float64', nullable: false, unit: 's', description: 'n / sample_rate.' },
  { name: 'start_time', type: 'timestamp_ms_utc', nullable: true, unit: 'UTC', description: 'Start of the capture, to the nearest millisecond (Broadcast Wave bext origination, a CSV date-time or POSIX seconds, or a declared FLAC tag, HDF5 attribute or MAT-file variable); null when unknown.' },
];

/** The verdict columns that follow the identity and label columns. */
export const QUALITY_COLUMNS: TableColumn[] = [
  { name: 'quality', type: 'string', nullable: false, unit: '', description: 'Worst severity of the channel\'s flags: ok, note, warn or fail.' },
  { name: 'flags', type: 'string', nullable: false, unit: '', description: 'Comma-separated names of the flags that are not ok.' },
];

