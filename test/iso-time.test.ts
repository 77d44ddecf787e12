// Start times written as text in files (HDF5 attributes, FLAC tags, MAT-file variables): ISO 8601 date-times, UTC unless
// they carry an offset (ISO 8601-1:2019; the calendar of days in a month, common practice); anything else is not a time.
import { describe, expect, it } from 'vitest';
import { isoTimeMs } from '../stages/read/iso-time.js';
import { datestrMs, numberTimeMs, startFrom } from '../stages/read/setting-values.js';

describe('start times as ISO 8601 text', () => {
  it('reads dates, times of day, fractions and zones, UTC when none is given', () => {
    expect(isoTimeMs('2026-03-14T02:00:00Z')).toBe(Date.UTC(2026, 2, 14, 2));
    expect(isoTimeMs('2026-03-14T02:00:00')).toBe(Date.UTC(2026, 2, 14, 2));
    expect(isoTimeMs(' 2026-03-14 02:00:30.25 ')).toBe(Date.UTC(2026, 2, 14, 2, 0, 30, 250));
    expect(isoTimeMs('2026-03-15T02:00:00+01:00')).toBe(Date.UTC(2026, 2, 15, 1));
    expect(isoTimeMs('2026-03-15T02:00+0100')).toBe(Date.UTC(2026, 2, 15, 1));
    expect(isoTimeMs('2026-03-14')).toBe(Date.UTC(2026, 2, 14));
    expect(isoTimeMs('2024-02-29T12:00:00z')).toBe(Date.UTC(2024, 1, 29, 12));
    // Finer than a millisecond, where Date.parse alone drops all past the third decimal.
    expect(isoTimeMs('2026-03-14T02:00:00.0000390625+01:00') - Date.UTC(2026, 2, 14, 1)).toBeCloseTo(0.0390625, 3); // to within 0.5 µs: a double holds today's ms since the epoch to about 0.2 µs
    expect(isoTimeMs('2026-03-14 02:00:00.123456') - Date.UTC(2026, 2, 14, 2)).toBeCloseTo(123.456, 3);
    // A comma as the decimal sign, and an offset of hours alone (ISO 8601:2004, 4.2.2.4 and 4.2.5.1; from memory).
    expect(isoTimeMs('2026-03-14T10:20:30,125')).toBe(Date.UTC(2026, 2, 14, 10, 20, 30, 125));
    expect(isoTimeMs('2026-03-14T10:20:30+02')).toBe(Date.UTC(2026, 2, 14, 8, 20, 30));
    expect(isoTimeMs('2026-03-14 10:20:30,5-05')).toBe(Date.UTC(2026, 2, 14, 15, 20, 30, 500));
  });

  it('refuses what Date.parse would guess at: words, bare numbers, days not in the calendar, times not on the clock', () => {
    for (const text of ['night 3', 'test rig B, night 3', '7', '12/11/2026', '2026-02-30T00:00:00Z', '2025-02-29', '2026-03-14T24:00:00Z', '2026-03-14T02:60Z', '2026-3-14', '2026-03-14-05', '2026-03-14T10:20:30+2', '']) {
      expect(isoTimeMs(text), text).toBeNaN();
    }
  });
});

// MATLAB's own forms: datenum counts days from 1 January of year 0 as day 1, so 1970-01-01 is 719529 (from memory; Python's
// date(1970, 1, 1).toordinal() + 366 gives the same); datestr's default text is dd-mmm-yyyy HH:MM:SS (from memory).
describe('start times as MATLAB keeps them', () => {
  it('reads a datenum in its range, and POSIX seconds outside it', () => {
    expect(numberTimeMs(719529)).toBe(0);
    expect(numberTimeMs(719529.5)).toBe(43_200_000);
    expect(numberTimeMs(740302 + (2 * 3600 + 30 * 60 + 15) / 86400)).toBe(Date.UTC(2026, 10, 16, 2, 30, 15));
    expect(numberTimeMs(1_794_803_415)).toBe(1_794_803_415_000);
    expect(numberTimeMs(0)).toBe(0);
  });

  it('reads datestr text, its month a name and no zone (UTC), and refuses days not in the calendar or unknown months', () => {
    expect(datestrMs('16-Nov-2026 02:30:15')).toBe(Date.UTC(2026, 10, 16, 2, 30, 15));
    expect(datestrMs('01-JAN-2027')).toBe(Date.UTC(2027, 0, 1));
    for (const text of ['30-Feb-2026 00:00:00', '16-Nox-2026 02:30:15', '16-11-2026 02:30:15', '16-Nov-2026 24:00:00']) expect(datestrMs(text), text).toBeNaN();
  });

  it('takes either as a start time, and names all four forms when neither fits', () => {
    expect(startFrom('16-Nov-2026 02:30:15', 'variable "t0"', 'mat.start_time_variable').toISOString()).toBe('2026-11-16T02:30:15.000Z');
    expect(startFrom(new Float64Array([740302.5]), 'variable "t0"', 'mat.start_time_variable').toISOString()).toBe('2026-11-16T12:00:00.000Z');
    expect(() => startFrom('Monday', 'variable "t0"', 'mat.start_time_variable')).toThrow('variable "t0" (the start time) holds "Monday", neither an ISO 8601 date-time nor POSIX seconds (nor MATLAB\'s datenum or datestr); check the file or mat.start_time_variable');
  });
});
