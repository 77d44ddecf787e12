// A start time a file keeps as text: ISO 8601 (ISO 8601-1:2019) date and time of day, with an optional fraction of a second
// and zone, taken as UTC when it names none. Date.parse alone takes "night 3" for 1 March 2001 and rolls 30 February over
// into March, so only real calendar dates and times of day pass.
// The fraction's decimal sign is a comma or a full stop, and an offset from UTC may give hours alone, as +02 (ISO 8601:2004,
// 4.2.2.4 and 4.2.5.1; from memory).
const ISO_DATE_TIME = /^(\d{4})-(\d{2})-(\d{2})(?:[T ](\d{2}):(\d{2})(?::(\d{2})([.,]\d+)?)?)?\s*(Z|[+-]\d{2}(?::?\d{2})?)?$/i;

/** Milliseconds since the epoch, finer than one where the text is (Date.parse keeps whole ms), or NaN for text that is not such a date-time. */
export function isoTimeMs(text: string): number {
  const m = text.trim().match(ISO_DATE_TIME);
  if (!m) return NaN;
  const [, y, mo, d, h = '00', mi = '00', s = '00', fraction = '', zone = 'Z'] = m;
  // A date alone followed by -05 is no date-time with an offset.
  if (m[4] === undefined && zone.length === 3) return NaN;
  if (!isCalendarDate(Number(y), Number(mo), Number(d))) return NaN;
  if (Number(h) > 23 || Number(mi) > 59 || Number(s) > 59) return NaN;
  const offset = zone.length === 3 ? `${zone}:00` : zone.toUpperCase();
  return Date.parse(`${y}-${mo}-${d}T${h}:${mi}:${s}${offset}`) + (fraction ? Number(`0.${fraction.slice(1)}`) * 1000 : 0);
}

/**
 * A start as the tables keep it, to the millisecond (their timestamp unit), rounded to the nearest (half up): a Date
 * alone drops a finer fraction, so 00.0007 would read 00.000 and 00.9996 00.999.
 */
export const startAt = (ms: number): Date => new Date(Math.round(ms));

/** Whether the day exists: Date.UTC rolls 30 February over into March. */
export const isCalendarDate = (y: number, m: number, d: number) => {
  const day = new Date(Date.UTC(y, m - 1, d));
  return day.getUTCFullYear() === y && day.getUTCMonth() === m - 1 && day.getUTCDate() === d;
};
