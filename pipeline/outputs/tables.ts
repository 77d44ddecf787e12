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
  { name: 'mean', type: 'float64', nullable: true, unit: '[unit]', description: 'Mean of the window\'s finite samples; null when it has none.' },
  { name: 'rms', type: 'float64', nullable: true, unit: '[unit]', description: 'RMS of the window\'s finite samples; null when it has none.' },
  { name: 'peak', type: 'float64', nullable: true, unit: '[unit]', description: 'Largest absolute finite value in the window; null when it has none.' },
  { name: 'speed_rpm', type: 'float64', nullable: true, unit: 'rpm', description: 'Tacho channels: shaft speed over the window, from the good pulse intervals inside it (each counted by the share of it inside); null on other channels.' },
];

/** cycles.parquet: rainflow cycles per recording × channel, binned or one row per distinct range and mean (at most 65,536 a channel). */
export const CYCLE_TABLE: TableColumn[] = [
  ...WINDOW_TABLE.slice(0, 3),
  { name: 'range', type: 'float64', nullable: false, unit: '[unit]', description: 'Cycle range (a bin\'s centre when binned).' },
  { name: 'mean', type: 'float64', nullable: false, unit: '[unit]', description: 'Cycle mean (a bin\'s centre when binned).' },
  { name: 'count', type: 'float64', nullable: false, unit: '1', description: 'Cycles counted: full cycles 1, residue half cycles 0.5.' },
];

/** Every secondary table by name, in the order they are written and exported. */
export const SECONDARY_TABLES: Record<string, TableColumn[]> = { windows: WINDOW_TABLE, cycles: CYCLE_TABLE };
