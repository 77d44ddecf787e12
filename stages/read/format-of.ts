// A recording's format from its file name, without loading any reader (the scan names formats of thousands of files).
import { extname } from 'node:path';
import type { Format } from './recording.js';

const BY_EXTENSION: Record<string, Format> = { '.wav': 'wav', '.wave': 'wav', '.bwf': 'wav', '.csv': 'csv', '.tsv': 'csv', '.txt': 'csv', '.bin': 'raw', '.raw': 'raw', '.dat': 'raw', '.flac': 'flac', '.h5': 'hdf5', '.hdf5': 'hdf5', '.mat': 'mat' };

export function formatOf(path: string): Format | null {
  return BY_EXTENSION[extname(path).toLowerCase()] ?? null;
}
