// A dropout raised by a stretch of exact zeros: quality.json keeps its value (the share missing, 0 here) and its evidence
// (the zero run in seconds); the report's value says what raised it. An invented rig's one capture, 2400 samples zeroed.
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { encodeWav } from '../scripts/wav-file.js';
import { launchBrowser, openPage } from './browser.js';
import { oneRigArchive, quern, readJson, tempDir } from './helpers.js';

const FS = 8000;

describe('a dropout of exact zeros in the report', () => {
  it('shows the zero run in seconds as the flag\'s value, as its evidence and message say', async () => {
    const root = tempDir(), archive = join(root, 'archive'), out = join(root, 'out');
    mkdirSync(join(archive, 'rig'), { recursive: true });
    writeFileSync(join(archive, 'archive.yaml'), oneRigArchive(FS));
    // A 200 Hz cosine at a third of the range (at its crest where the zeros start and end), with 1.2 s to 1.5 s exactly zero: 0.3 s × 8000 samples/s = 2400 samples (arithmetic).
    const x = Float64Array.from({ length: 2 * FS }, (_, i) => (i >= 1.2 * FS && i < 1.5 * FS ? 0 : 0.33 * Math.cos(2 * Math.PI * 200 * i / FS)));
    writeFileSync(join(archive, 'rig', '2026-09-01.wav'), encodeWav({ sampleRate: FS, channels: [x], origination: new Date(Date.UTC(2026, 8, 1, 2)) }));
    expect(quern('reduce', archive, '--out', out, '--jobs', '1').code).toBe(0);
    const flag = readJson(join(out, 'quality.json')).recordings[0].channels[0].flags.find((f: any) => f.name === 'dropout');
    expect(flag).toMatchObject({ severity: 'warn', value: 0, evidence: { missing: 0, zero_run_s: 0.3 } });
    expect(flag.message).toMatch(/^exact zeros for 0\.3 s ending at 1\.5 s/);
    const browser = await launchBrowser();
    try {
      const { page, errors } = await openPage(browser, join(out, 'quality.html'));
      const row = page.locator('section.channel[data-flag="dropout"] table.latest tr[data-recording]');
      expect(await row.locator('td').nth(2).textContent()).toBe('exact zeros for 0.3 s (no sample missing)');
      expect(errors).toEqual([]);
    } finally {
      await browser.close();
    }
    expect(readFileSync(join(out, 'quality.html'), 'utf8')).not.toContain('0 % of samples missing');
  });
});
