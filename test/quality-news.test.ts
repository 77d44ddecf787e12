// Tonight's data-quality findings first: four nights of an invented test stand whose acc_a clips every night, run over the
// whole archive each night into the same output folder; on night 4 acc_b goes dead. The dead sensor is new and leads the
// terminal, quality.json and quality.html; the clipping that every run reported is told once, summarised over the nights.
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { encodeWav } from '../scripts/wav-file.js';
import { qualitySummary } from '../pipeline/outputs/quality.js';
import { launchBrowser, openPage } from './browser.js';
import { quern, readJson, tempDir } from './helpers.js';

const FS = 8000;
const day = (n: number) => `2026-05-${String(n).padStart(2, '0')}`;

/**
 * Night n: acc_a a 120 Hz tone at 1.5 × the ±100 m/s² range, so that its tops sit on the converter's extreme codes (a signal
 * beyond the range clips there: common practice); acc_b a 75 Hz tone at half the range with seeded noise, or, on the dead
 * night, exactly zero (a sensor that does not move: no converter step at all).
 */
function night(n: number, deadB: boolean): Buffer {
  let a = 900 + n;
  const u = () => { a = (a * 1103515245 + 12345) >>> 0; return a / 4294967296; };
  const acc = new Float64Array(FS), b = new Float64Array(FS);
  for (let i = 0; i < FS; i++) {
    acc[i] = Math.max(-1, Math.min(1, 1.5 * Math.sin(2 * Math.PI * 120 * i / FS) + 0.02 * (u() - 0.5)));
    b[i] = deadB ? 0 : 0.5 * Math.sin(2 * Math.PI * 75 * i / FS) + 0.02 * (u() - 0.5);
  }
  return encodeWav({ sampleRate: FS, channels: [acc, b], origination: new Date(Date.UTC(2026, 4, n, 2)) });
}

const ARCHIVE = `groups:
  - name: stand
    match: "stand/*.wav"
    sample_rate: ${FS}
    channels:
      - { name: acc_a, quantity: acceleration, unit: m/s^2, scale: 100, range: [-100, 100], bits: 16, max_frequency_hz: 1000 }
      - { name: acc_b, quantity: acceleration, unit: m/s^2, scale: 100, range: [-100, 100], bits: 16, max_frequency_hz: 1000 }
`;

const failLines = (stdout: string) => stdout.split('\n').filter((l) => /^\s+FAIL\s/.test(l));

describe('tonight\'s data-quality findings first', () => {
  const root = tempDir(), archive = join(root, 'archive'), out = join(root, 'out');
  mkdirSync(join(archive, 'stand'), { recursive: true });
  writeFileSync(join(archive, 'archive.yaml'), ARCHIVE);
  writeFileSync(join(root, 'spec.yaml'), 'statistics: {}\n');
  const reduce = () => quern('reduce', archive, '--out', out, '--spec', join(root, 'spec.yaml'), '--jobs', '1');
  const runs: string[] = [];
  for (let n = 1; n <= 4; n++) {
    writeFileSync(join(archive, 'stand', `${day(n)}.wav`), night(n, n === 4));
    const r = reduce();
    if (r.code !== 0) throw new Error(r.stderr);
    runs.push(r.stdout);
  }
  const again = reduce().stdout;

  it('lists a flag the previous run did not report first, marked NEW; one failing on every night in one line, not new', () => {
    // Night 1: nothing kept to compare with, so the clipping is new.
    expect(failLines(runs[0])).toEqual([expect.stringMatching(/^ {2}FAIL {4}stand\/2026-05-01\.wav acc_a: saturation: .*; NEW$/)]);
    // Night 2: reported the night before, so not new, and told once for both recordings, the latest named.
    expect(failLines(runs[1])).toEqual([expect.stringMatching(/^ {2}FAIL {4}stand acc_a: saturation in 2 of 2 recordings, the latest stand\/2026-05-02\.wav: .*[^W]$/)]);
    const four = failLines(runs[3]);
    expect(four).toHaveLength(2);
    expect(four[0]).toMatch(/^ {2}FAIL {4}stand\/2026-05-04\.wav acc_b: flatline: .*; NEW$/);
    expect(four[1]).toMatch(/^ {2}FAIL {4}stand acc_a: saturation in 4 of 4 recordings, the latest stand\/2026-05-04\.wav: /);
    expect(four[1]).not.toMatch(/NEW/);
    // The same archive again: the previous run reported everything, so nothing is new.
    expect(failLines(again).some((l) => l.includes('NEW'))).toBe(false);
  });

  it('marks new flags in quality.json, and keeps every failed flag of every recording there', () => {
    const q = readJson(join(out, 'quality.json'));
    const flags = q.recordings.flatMap((r: any) => r.channels.flatMap((c: any) => c.flags.filter((f: any) => f.severity === 'fail').map((f: any) => ({ recording: r.recording, channel: c.channel, name: f.name, new: f.new }))));
    expect(flags.filter((f: any) => f.name === 'saturation')).toHaveLength(4);
    // Written by the fourth night's run (the fifth found the same outputs and left them): its new flag is the dead sensor.
    expect(flags.filter((f: any) => f.new)).toEqual([{ recording: 'stand/2026-05-04.wav', channel: 'acc_b', name: 'flatline', new: true }]);
    expect(flags.every((f: any) => typeof f.new === 'boolean')).toBe(true);
  });

  it('folds quality.html\'s channel flags into one entry each, new first, the repeated clipping counted with its nights listed', async () => {
    const browser = await launchBrowser();
    try {
      const { page, errors } = await openPage(browser, join(out, 'quality.html'));
      const shown = await page.locator('section.channel').evaluateAll((els) => els.map((e) => `${e.getAttribute('data-recording')} ${e.getAttribute('data-channel')} ${e.getAttribute('data-flag')} ${e.getAttribute('data-count')}/${e.getAttribute('data-of')}${e.getAttribute('data-new') ? ' new' : ''}`));
      expect(shown).toEqual(['stand/2026-05-04.wav acc_b flatline 1/4 new', 'stand/2026-05-04.wav acc_a saturation 4/4']);
      expect(await page.locator('section.channel[data-new] h3').textContent()).toMatch(/unusable new stand · acc_b \(m\/s\^2\): flatline in 1 of 4 recordings/);
      // The clipping's earlier nights, newest first, in a collapsed list under its latest.
      const clip = page.locator('section.channel[data-channel="acc_a"]');
      expect(await clip.locator('h3').textContent()).toMatch(/saturation in 4 of 4 recordings/);
      expect(await clip.locator('table.latest tr[data-recording]').getAttribute('data-recording')).toBe('stand/2026-05-04.wav');
      expect(await clip.locator('details table.earlier tr[data-recording]').evaluateAll((els) => els.map((e) => e.getAttribute('data-recording')))).toEqual([3, 2, 1].map((n) => `stand/${day(n)}.wav`));
      expect(await clip.locator('details').getAttribute('open')).toBeNull();
      expect(errors).toEqual([]);
    } finally {
      await browser.close();
    }
  });

  it('counts the failed flags left off the terminal, and how many of those channel flags are new; a new flag leads, the newest first', () => {
    const g = (channel: string, fresh: boolean, failed: number, start_ms: number) => ({ group: 'stand', channel, flag: 'saturation', new: fresh, failed, of: failed, latest: { recording: `r-${channel}`, start_ms, message: 'clipped' } });
    const totals = { channels: { ok: 0, note: 0, warn: 0, fail: 3 }, recordings: { unreadable: 0, unmatched: 0 }, flags: {} } as never;
    const lines = qualitySummary({ totals, fails: [g('a', false, 5, 3), g('c', true, 1, 1), g('b', true, 1, 2)], failCount: 7 }, 1);
    expect(lines.slice(1)).toEqual(['  FAIL    r-b b: saturation: clipped; NEW', '  …       and 6 more failed flags (on 1 channel flag new in this run): see quality.json']);
    // An unchanged re-run's summary, kept by a run before the flags were gathered, still tells its lines.
    expect(qualitySummary({ totals, failLines: ['  FAIL    r a: saturation: clipped'], failCount: 2 } as never).slice(1)).toEqual(['  FAIL    r a: saturation: clipped', '  …       and 1 more failed flags: see quality.json']);
  });
});
