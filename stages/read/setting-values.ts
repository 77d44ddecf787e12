// The sample rate and the start time as a file keeps them beside its samples (an HDF5 attribute or dataset, a MAT-file
// variable): a number, or text of one, or a one-element array of either; `held` names where it was found.
import { isoTimeMs } from './iso-time.js';
import { RecordingError } from './recording.js';

/** A one-element array's element; anything else as it is. */
export const scalar = (v: unknown) => (ArrayBuffer.isView(v) || Array.isArray(v)) && (v as ArrayLike<unknown>).length === 1 ? (v as ArrayLike<unknown>)[0] : v;

const shown = (v: unknown) => (typeof v === 'string' ? JSON.stringify(v.slice(0, 60)) : String(v).slice(0, 60));

/** The sample rate a value holds, in Hz. */
export function rateFrom(value: unknown, held: string, where: string): number {
  const v = scalar(value);
  const rate = typeof v === 'bigint' || typeof v === 'string' ? Number(v) : v;
  if (typeof rate !== 'number' || !(rate > 0) || !Number.isFinite(rate)) throw new RecordingError(`${held} (the sample rate) holds ${shown(v)}, not a positive number of Hz; check the file or ${where}`);
  return rate;
}

/** The start time a value holds: ISO 8601 text (UTC unless it carries an offset), or POSIX seconds. */
export function startFrom(value: unknown, held: string, where: string): Date {
  const v = scalar(value);
  const t = typeof v === 'string' ? isoTimeMs(v) : Number(v) * 1000;
  if (!Number.isFinite(t)) throw new RecordingError(`${held} (the start time) holds ${shown(v)}, neither an ISO 8601 date-time nor POSIX seconds; check the file or ${where}`);
  return new Date(t);
}
