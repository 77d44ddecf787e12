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
    expect(qualitySummary({ totals: totals(1), fails: [], failCount: 0 })[0]).toBe('  quality: 1 channel fails, 0 warn, 0 with notes, 3 ok');
    expect(qualitySummary({ totals: totals(2), fails: [], failCount: 0 })[0]).toBe('  quality: 2 channels fail, 0 warn, 0 with notes, 3 ok');
  });

  it('says there is no channel to look at again rather than leave its heading empty', () => {
    expect(sectionsHead(0)).toMatch(/Channels that need a second look<\/h2>\n<p class="steady">None/);
    expect(sectionsHead(2)).not.toMatch(/None/);
  });
});

describe('the changes line when most watched features have no verdict', () => {
  const report = (steady: number, unscored: number) => ({
    baseline: 'the first 3 usable recordings of each group and channel by start time', thresholds: { change_db: 6, score: 6, spread_floor: 0.1, deadband: 0.2 },
    features: ['rms'], totals: { steady, changed: 0, alarm: 0, unscored }, items: [], stale_baselines: 0,
  });

  it('counts the features with no verdict beside the steady ones on the terminal', async () => {
    const { changesSummary } = await import('../pipeline/trends/summary.js');
    expect(changesSummary(report(900, 2400) as never)[0]).toBe('  changes: 0 channel features at an alarm limit, 0 changed; 900 steady, 2400 with no verdict (baseline forming, held by figures of other options, or data unusable), against the first 3 usable recordings of each group and channel by start time');
    expect(changesSummary(report(12, 0) as never)[0]).toBe('  changes: 0 channel features at an alarm limit, 0 changed, against the first 3 usable recordings of each group and channel by start time');
  });

  it('says one feature at an alarm limit in the singular', async () => {
    const { changesSummary } = await import('../pipeline/trends/summary.js');
    // Every alarm is listed, whatever the number of lines asked for.
    const alarm = { group: 'rig', channel: 'acc', channel_unit: 'm/s^2', feature: 'rms', unit: 'm/s^2', verdict: 'alarm', limit: 'alarm', limits: { alarm: 5 }, recording: 'r', start_time: null, value: 6, baseline: null, change_db: null, score: null, since: { recording: 'r', start_time: null }, held: false };
    const one = { ...report(12, 0), items: [alarm] };
    expect(changesSummary(one as never, 0)[0]).toMatch(/^  changes: 1 channel feature at an alarm limit, 0 changed/);
    expect(changesSummary(one as never, 0)[1]).toBe('  ALARM   rig acc rms 6 m/s^2 on r; at or above its alarm limit 5 m/s^2');
    expect(changesSummary({ ...one, items: [alarm, alarm] } as never, 0)[0]).toMatch(/^  changes: 2 channel features at an alarm limit/);
  });

  it('does not open the report with an all-clear in the calm colour when most features have none', async () => {
    const { changesHtml } = await import('../pipeline/outputs/report-changes.js');
    const most = await changesHtml(report(900, 2400) as never, []);
    expect(most).toMatch(/<p class="unjudged">No change found, but only 900 channel features of this run have a verdict \(steady\); 2400 have none/);
    expect(most).not.toMatch(/class="steady"/);
    expect(await changesHtml(report(900, 10) as never, [])).toMatch(/<p class="steady">Nothing changed: 900 channel features of this run read steady; 10 have no verdict yet/);
  });
});
