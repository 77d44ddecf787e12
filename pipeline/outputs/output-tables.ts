// The tables a run writes and their columns, from the spec and the label columns: worked out alike by the main thread
// (the outputs' digest, the Parquet writers) and by each worker for its slices, so a slice's task need not carry them.
import { featureColumns } from '../../stages/index.js';
import type { ReductionSpec } from '../../spec/reduction.js';
import { IDENTITY_COLUMNS, QUALITY_COLUMNS, type TableColumn } from './columns.js';
import { SECONDARY_TABLES } from './tables.js';
import { SPECTRA_TABLE } from '../trends/tables.js';

/** features.parquet's columns: identity, labels, quality, then every feature column of the spec. */
export function tableColumns(spec: ReductionSpec, labels: string[]): TableColumn[] {
  return [
    ...IDENTITY_COLUMNS,
    ...labels.map((name): TableColumn => ({ name, type: 'string', nullable: true, unit: '', description: 'Label declared for the recording\'s group.' })),
    ...QUALITY_COLUMNS,
    ...featureColumns(spec).map((c): TableColumn => ({ ...c, type: 'float64', nullable: true })),
  ];
}

/** The names of features.parquet's columns that are not labels, which a label may not take. */
export const reservedColumnNames = (spec: ReductionSpec): string[] => tableColumns(spec, []).map((c) => c.name);

/** Every table by name, in the order they are written: features, the secondary tables, and spectra when `spectra`. */
export function outputTables(spec: ReductionSpec, labels: string[], spectra: boolean): Record<string, TableColumn[]> {
  return { features: tableColumns(spec, labels), ...SECONDARY_TABLES, ...(spectra ? { spectra: SPECTRA_TABLE } : {}) };
}
