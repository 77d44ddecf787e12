// What quern itself writes into an output folder (tables, reports, run record, exports, stored results, parts, lock), so
// that an output folder inside the archive never has its own files taken for recordings, by a run or by quern check.
import { SECONDARY_TABLES } from './tables.js';

/** Every table a run or merge may write, by name (features.parquet, windows.parquet…). */
const TABLES = ['features', ...Object.keys(SECONDARY_TABLES), 'trends', 'spectra'];

/** The files and folders quern writes at the top of an output folder, exports (CSV, XLSX) included; its working files are hidden temporaries. */
export const OWN_OUTPUT_NAMES: ReadonlySet<string> = new Set([
  ...TABLES.flatMap((t) => [`${t}.parquet`, `${t}.csv`]),
  'quality.json', 'quality.html', 'run.json', 'outputs.json', 'run.lock', 'run.lock.takeover',
  'quality-flags.csv', 'features-wide.csv', 'tables.xlsx', 'cache', 'parts',
]);

/** Whether a folder holding these entries is an output folder of quern's: its stored results beside a run's record, lock or parts. */
export const isOutputFolder = (names: Iterable<string>): boolean => {
  const here = new Set(names);
  return here.has('cache') && (here.has('run.json') || here.has('outputs.json') || here.has('run.lock') || here.has('parts'));
};

/** Whether a path relative to an output folder (with / separators) is one of quern's own outputs, or lies in its cache/ or parts/. */
export const isOwnOutput = (relative: string): boolean => OWN_OUTPUT_NAMES.has(relative.split('/')[0]);
