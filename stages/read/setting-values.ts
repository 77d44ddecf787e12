// The sample rate and the start time as a file keeps them beside its samples (an HDF5 attribute or dataset, a MAT-file
// variable): a number, or text of one, or a one-element array of either; `held` names where it was found. Start times
// written by MATLAB come as its datenum or datestr as often as in ISO 8601, so both are read too.
import { isoTimeMs, startAt } from './iso-time.js';
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

/** Channel names a file keeps beside its samples, in channel order: one a channel, none empty, none twice (channels are found by them). */
export function namesFrom(names: string[], channels: number, held: string, where: string): string[] {
  if (names.length !== channels) throw new RecordingError(`${held} (the channel names) holds ${names.length} name${names.length === 1 ? '' : 's'} but the samples have ${channels} channel${channels === 1 ? '' : 's'}; check the file or ${where}`);
  const empty = names.indexOf('');
  if (empty >= 0) throw new RecordingError(`${held} (the channel names): name ${empty + 1} of ${names.length} is empty; check the file or ${where}`);
  const twice = names.find((n, i) => names.indexOf(n) !== i);
  if (twice !== undefined) throw new RecordingError(`${held} (the channel names) holds "${twice}" twice; channels are found by name, so each must be unique: check the file or ${where}`);
  return names;
}

/** MATLAB's datenum of 1970-01-01 (datenum counts days from its day 1, 1 January of year 0; from memory, and Python's date(1970, 1, 1).toordinal() + 366). */
export const DATENUM_1970 = 719_529;
/** Numbers this large and below 10^6 are datenums (the years 273 to 2737): as POSIX seconds they would fall in 1970's first twelve days. */
const DATENUM_FROM = 100_000, DATENUM_TO = 1_000_000;
const MONTHS = ['jan', 'feb', 'mar', 'apr', 'may', 'jun', 'jul', 'aug', 'sep', 'oct', 'nov', 'dec'];
/** MATLAB's datestr default, 'dd-mmm-yyyy HH:MM:SS' (16-Nov-2026 02:30:15): unambiguous, since its month is a name. */
const DATESTR = /^(\d{1,2})-([a-z]{3})-(\d{4})(?: (\d{2}):(\d{2}):(\d{2}))?$/i;

/** A datestr text as ms since the epoch (UTC, as it names no zone), or NaN. */
export function datestrMs(text: string): number {
  const m = text.trim().match(DATESTR);
  const month = m ? MONTHS.indexOf(m[2].toLowerCase()) + 1 : 0;
  if (!m || month === 0) return NaN;
  return isoTimeMs(`${m[3]}-${String(month).padStart(2, '0')}-${m[1].padStart(2, '0')}T${m[4] ?? '00'}:${m[5] ?? '00'}:${m[6] ?? '00'}`);
}

/** A number as ms since the epoch: a MATLAB datenum (days, kept to the ms its double resolves) in its range, else POSIX seconds. */
export function numberTimeMs(n: number): number {
  return n >= DATENUM_FROM && n < DATENUM_TO ? Math.round((n - DATENUM_1970) * 86_400_000) : n * 1000;
}

/** The start time a value holds: ISO 8601 text (UTC unless it carries an offset) or MATLAB's datestr text; POSIX seconds or a MATLAB datenum. */
export function startFrom(value: unknown, held: string, where: string): Date {
  const v = scalar(value);
  const iso = typeof v === 'string' ? isoTimeMs(v) : NaN;
  const t = typeof v === 'string' ? (Number.isFinite(iso) ? iso : datestrMs(v)) : numberTimeMs(Number(v));
  if (!Number.isFinite(t)) throw new RecordingError(`${held} (the start time) holds ${shown(v)}, neither an ISO 8601 date-time nor POSIX seconds (nor MATLAB's datenum or datestr); check the file or ${where}`);
  return startAt(t);
}
