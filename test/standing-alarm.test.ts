// A standing alarm stays at the top: an invented rig of seven accelerometers run night by night with --since. acc_0 passes
// its declared alarm limit on night 4 and stays above it; on night 5 the six others step up by 8 dB, all new. The alarm,
// told the night before, still leads the terminal and quality.html on night 5, ahead of the new changes.
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { encodeWav } from '../scripts/wav-file.js';
import { launchBrowser, openPage } from './browser.js';
import { quern, readJson, tempDir } from './helpers.js';

const FS = 8000;
// +8 dB of amplitude is a factor 10^(8/20) = 2.512 (decibels of an amplitude, 20·log10; common practice).
const STEP = 10 ** (8 / 20);
const CHANNELS = 7;
const day = (n: number) => `2026-08-0${n}`;

/**
 * Night n: on each channel a 300 Hz tone of 5 m/s² amplitude (RMS 5/√2 = 3.54 m/s², a sine's RMS: common practice) with seeded
 * noise; acc_0 ×2.512 from night 4 (RMS 8.9, beyond its alarm limit of 6), the others ×2.512 from night 5.
 */
function night(n: number): Buffer {
  let a = 3100 + n;
  const u = () => { a = (a * 1103515245 + 12345) >>> 0; return a / 4294967296; };
  const gain = (c: number) => ((c === 0 ? n >= 4 : n >= 5) ? STEP : 1);
  const channels = Array.from({ length: CHANNELS }, (_, c) => Float64Array.from({ length: FS }, (_, i) => gain(c) * (0.05 * Math.sin(2 * Math.PI * 300 * i / FS) + 0.002 * (u() - 0.5))));
  return encodeWav({ sampleRate: FS, channels, origination: new Date(Date.UTC(2026, 7, n, 2)) });
}

const ARCHIVE = `groups:\n  - name: rig\n    match: "rig/*.wav"\n    sample_rate: ${FS}\n    channels:\n${Array.from({ length: CHANNELS }, (_, c) => `      - { name: acc_${c}, quantity: acceleration, unit: m/s^2, scale: 100, range: [-100, 100], bits: 16, max_frequency_hz: 1000 }`).join('\n')}\n`;

const listed = (stdout: string) => stdout.split('\n').filter((l) => /^\s+(CHANGED|ALARM|…and)/.test(l));

describe('a standing alarm', () => {
  const root = tempDir(), archive = join(root, 'archive'), out = join(root, 'out');
  mkdirSync(join(archive, 'rig'), { recursive: true });
  writeFileSync(join(archive, 'archive.yaml'), ARCHIVE);
  writeFileSync(join(root, 'spec.yaml'), 'statistics: {}\ntrends: { features: [rms], limits: { rms: [{ channel: acc_0, alarm: 6 }] } }\n');
  const runs: string[] = [];
  for (let n = 1; n <= 5; n++) {
    writeFileSync(join(archive, 'rig', `${day(n)}.wav`), night(n));
    const r = quern('reduce', archive, '--out', out, '--spec', join(root, 'spec.yaml'), '--jobs', '1', '--since', day(n));
    if (r.code !== 0) throw new Error(r.stderr);
    runs.push(r.stdout);
  }

  it('is listed first on the terminal on its second night, not new, ahead of six new changes', () => {
    expect(listed(runs[3])).toEqual([expect.stringMatching(/^ {2}ALARM {3}rig acc_0 rms .*; NEW$/)]);
    const five = listed(runs[4]);
    expect(five[0]).toMatch(/^ {2}ALARM {3}rig acc_0 rms .*alarm limit 6 m\/s\^2/);
    expect(five[0]).not.toMatch(/NEW/);
    expect(five.slice(1, 6).every((l) => /^ {2}CHANGED rig acc_[1-6] rms .*; NEW$/.test(l))).toBe(true);
    expect(five[6]).toBe('  …and 1 more in quality.json and trends.parquet (1 of them new)');
  });

  it('leads quality.json\'s items and quality.html\'s table', async () => {
    const items = readJson(join(out, 'quality.json')).changes.items;
    expect(items.map((c: any) => `${c.channel} ${c.verdict} ${c.new}`)).toEqual(['acc_0 alarm false', ...Array.from({ length: 6 }, () => expect.stringMatching(/^acc_[1-6] changed true$/))]);
    const browser = await launchBrowser();
    try {
      const { page, errors } = await openPage(browser, join(out, 'quality.html'));
      const rows = await page.locator('table.changes-list tr[data-feature]').evaluateAll((els) => els.map((e) => `${e.children[2].textContent} ${e.children[0].textContent}`));
      expect(rows[0]).toBe('acc_0 alarm');
      expect(rows.slice(1).every((r) => /^acc_[1-6] changed new$/.test(r))).toBe(true);
      expect(errors).toEqual([]);
    } finally {
      await browser.close();
    }
  });
});
