// A change whose channel failed the data-quality checks on the run's last recording: its value is the latest usable one, and
// the terminal, quality.json and quality.html say so. Five nights of an invented rig in one run: acc +8 dB from night 4,
// and on night 5 a knock clips it.
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { encodeWav } from '../scripts/wav-file.js';
import { launchBrowser, openPage } from './browser.js';
import { oneRigArchive, quern, readJson, tempDir } from './helpers.js';

const FS = 8000;
// +8 dB of amplitude is a factor 10^(8/20) = 2.512 (decibels of an amplitude, 20·log10; common practice).
const STEP = 10 ** (8 / 20);

/** Night n: a 300 Hz tone with seeded noise, ×2.512 from night 4; on night 5 a 0.1 s knock at 1.5 × the range, held at the converter's extreme codes (clipped: common practice). */
function night(n: number): Buffer {
  let a = 5100 + n;
  const u = () => { a = (a * 1103515245 + 12345) >>> 0; return a / 4294967296; };
  const x = Float64Array.from({ length: FS }, (_, i) => (n >= 4 ? STEP : 1) * (0.05 * Math.sin(2 * Math.PI * 300 * i / FS) + 0.002 * (u() - 0.5)) + (n === 5 && i >= 4000 && i < 4800 ? 1.5 * Math.sin(2 * Math.PI * 300 * i / FS) : 0));
  return encodeWav({ sampleRate: FS, channels: [x.map((v) => Math.max(-1, Math.min(1, v)))], origination: new Date(Date.UTC(2026, 9, n, 2)) });
}

describe('a change whose latest recording failed the checks', () => {
  it('tells its value as the latest usable one, naming the failed recording and its flags', async () => {
    const root = tempDir(), archive = join(root, 'archive'), out = join(root, 'out');
    mkdirSync(join(archive, 'rig'), { recursive: true });
    writeFileSync(join(archive, 'archive.yaml'), oneRigArchive(FS));
    writeFileSync(join(root, 'spec.yaml'), 'statistics: {}\ntrends: { features: [rms] }\n');
    for (let n = 1; n <= 5; n++) writeFileSync(join(archive, 'rig', `2026-10-0${n}.wav`), night(n));
    const run = quern('reduce', archive, '--out', out, '--spec', join(root, 'spec.yaml'), '--jobs', '1');
    expect(run.code).toBe(0);
    const [item] = readJson(join(out, 'quality.json')).changes.items;
    expect(item).toMatchObject({ channel: 'acc', feature: 'rms', verdict: 'changed', recording: 'rig/2026-10-04.wav', failed_after: { recording: 'rig/2026-10-05.wav', start_time: '2026-10-05T02:00:00.000Z', flags: expect.arrayContaining(['saturation']) } });
    expect(run.stdout).toMatch(/CHANGED rig acc rms .* on 2026-10-04: .*; the latest usable value: 2026-10-05's recording failed the data-quality checks \(.*saturation.*\)/);
    const browser = await launchBrowser();
    try {
      const { page, errors } = await openPage(browser, join(out, 'quality.html'));
      const cell = page.locator('table.changes-list tr[data-feature="rms"] td').nth(4);
      expect(await cell.locator('[data-failed-after]').textContent()).toMatch(/^latest usable; 2026-10-05 02:00's recording failed: .*saturation/);
      expect(errors).toEqual([]);
    } finally {
      await browser.close();
    }
  });
});
