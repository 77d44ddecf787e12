// The secondary tables of a run: rows that stages add with ctx.addRow(name, …), each written as <name>.parquet.
// A new table is one entry here (and its description in schemas/); writing, shards, merge and exports follow from the list.
import type { TableColumn } from './columns.js';

/** windows.parquet: one row per recording × channel × window. */
export const WINDOW_TABLE: TableColumn[] = [
  { name: 'recording', type: 'string', nullable: false, unit: '', description: 'Path of the recording relative to the archive root.' },
  { name: 'channel', type: 'string', nullable: false, unit: '', description: 'Channel name.' },
  { name: 'unit', type: 'string', nullable: false, unit: '', description: 'Engineering unit of the channel.' },
  { name: 'window_start_s', type: 'float64', nullable: false, unit: 's', description: 'Start of the window from the start of the recording.' },
  { name: 'window_s', type: 'float64', nullable: false, unit: 's', description: 'Window length.' },
  { name: 'mean', type: 'float64', nullable: false, unit: '[unit]', description: 'Mean over the window.' },
  { name: 'rms', type: 'float64', nullable: false, unit: '[unit]', description: 'RMS over the window.' },
  { name: 'peak', type: 'float64', nullable: false, unit: '[unit]', description: 'Largest absolute value in the window.' },
];

/** Every secondary table by name, in the order they are written and exported. */
export const SECONDARY_TABLES: Record<string, TableColumn[]> = { windows: WINDOW_TABLE };
