// The terminal's notes line names the commonest kinds of note, so that a nightly log says what the notes are about.
import { describe, expect, it } from 'vitest';
import { commonNotes } from '../pipeline/outputs/report.js';
import { qualitySummary } from '../pipeline/outputs/quality.js';
import { sectionsHead } from '../pipeline/outputs/report-html.js';

describe('the notes line of the terminal summary', () => {
  it('counts one finding on many channels and recordings as one kind, the commonest first, numbers and channels aside', () => {
    const messages = [
      'acc_de: 4 fractional-octave bands (8000 Hz and up) reach above the Nyquist frequency 6400 Hz; left empty (null)',
      'mic: 4 fractional-octave bands (8000 Hz and up) reach above the Nyquist frequency 6400 Hz; left empty (null)',
      'acc_x: 14 fractional-octave bands (1000 Hz and up) reach above the Nyquist frequency 1280 Hz; left empty (null)',
      'orders: no channel of this recording declares pulses_per_rev; order figures left empty (null)',
      'orders: no channel of this recording declares pulses_per_rev; order figures left empty (null)',
      'tacho: tacho edges timed at 2.5 V, hysteresis 2 V, found from the first second; declare trigger_level',
    ];
    expect(commonNotes(messages)).toBe('3 such as "4 fractional-octave bands (8000 Hz and up) reach above the Nyquist frequency 6400 Hz" (3 channels), '
      + '2 such as "orders: no channel of this recording declares pulses_per_rev", and 1 other kind');
    expect(commonNotes(messages.slice(3, 5))).toBe('2 such as "orders: no channel of this recording declares pulses_per_rev"');
  });
});

describe('the report\'s counts and empty sections', () => {
  it('counts one failed channel in the singular on the terminal, more in the plural', () => {
    const totals = (fail: number) => ({ channels: { ok: 3, note: 0, warn: 0, fail }, recordings: { unreadable: 0, unmatched: 0 }, flags: {} }) as never;
    expect(qualitySummary({ totals: totals(1), failLines: [], failCount: 0 })[0]).toBe('  quality: 1 channel fails, 0 warn, 0 with notes, 3 ok');
    expect(qualitySummary({ totals: totals(2), failLines: [], failCount: 0 })[0]).toBe('  quality: 2 channels fail, 0 warn, 0 with notes, 3 ok');
  });

  it('says there is no channel to look at again rather than leave its heading empty', () => {
    expect(sectionsHead(0)).toMatch(/Channels that need a second look<\/h2>\n<p class="steady">None/);
    expect(sectionsHead(2)).not.toMatch(/None/);
  });
});
