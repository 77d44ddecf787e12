// Start times written as text in files (HDF5 attributes, FLAC tags, MAT-file variables): ISO 8601 date-times, UTC unless
// they carry an offset (ISO 8601-1:2019; the calendar of days in a month, common practice); anything else is not a time.
import { describe, expect, it } from 'vitest';
import { isoTimeMs } from '../stages/read/iso-time.js';

describe('start times as ISO 8601 text', () => {
  it('reads dates, times of day, fractions and zones, UTC when none is given', () => {
    expect(isoTimeMs('2026-03-14T02:00:00Z')).toBe(Date.UTC(2026, 2, 14, 2));
    expect(isoTimeMs('2026-03-14T02:00:00')).toBe(Date.UTC(2026, 2, 14, 2));
    expect(isoTimeMs(' 2026-03-14 02:00:30.25 ')).toBe(Date.UTC(2026, 2, 14, 2, 0, 30, 250));
    expect(isoTimeMs('2026-03-15T02:00:00+01:00')).toBe(Date.UTC(2026, 2, 15, 1));
    expect(isoTimeMs('2026-03-15T02:00+0100')).toBe(Date.UTC(2026, 2, 15, 1));
    expect(isoTimeMs('2026-03-14')).toBe(Date.UTC(2026, 2, 14));
    expect(isoTimeMs('2024-02-29T12:00:00z')).toBe(Date.UTC(2024, 1, 29, 12));
  });

  it('refuses what Date.parse would guess at: words, bare numbers, days not in the calendar, times not on the clock', () => {
    for (const text of ['night 3', 'test rig B, night 3', '7', '12/11/2026', '2026-02-30T00:00:00Z', '2025-02-29', '2026-03-14T24:00:00Z', '2026-03-14T02:60Z', '2026-3-14', '']) {
      expect(isoTimeMs(text), text).toBeNaN();
    }
  });
});
