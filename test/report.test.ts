// The quality report: planted defects flagged right, quality.json valid against its schema, quality.html rendered by a real browser.
import { mkdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { Ajv } from 'ajv';
import formats from 'ajv-formats';

const addFormats = formats as unknown as (ajv: Ajv) => Ajv;
import { beforeAll, describe, expect, it } from 'vitest';
import { storedEntries } from '../pipeline/plan/cache.js';
import { launchBrowser, openPage } from './browser.js';
import { quern, readJson, repo, sampleArchiveCopy } from './helpers.js';

describe('quality report of the sample archive', () => {
  let out = '', quality: any, stdout = '';
  beforeAll(() => {
    const archive = sampleArchiveCopy();
    out = join(archive, '..', 'out');
    stdout = quern('reduce', archive, '--out', out, '--quiet').stdout;
    quality = readJson(join(out, 'quality.json'));
  });

  it('flags every planted defect with the right flag and severity, and fails no clean channel', () => {
    const failing = quality.recordings.flatMap((r: any) => r.channels.filter((c: any) => c.severity === 'fail').map((c: any) => ({
      at: `${r.recording} ${c.channel}`, flags: c.flags.filter((f: any) => f.severity === 'fail').map((f: any) => f.name),
    })));
    expect(failing).toEqual([
      { at: 'cell-sound/2026-11-20_cell-sound.wav mic_spare', flags: ['noise_floor'] }, // unplugged: the chain's noise on a 24-bit converter
      { at: 'nightly/2026-11-19/pump-endurance.wav acc_de', flags: ['saturation'] }, // clipped at the instrument range
      { at: 'nightly/2026-11-21/pump-endurance.wav pressure', flags: ['flatline'] }, // disconnected transducer
      { at: 'quicklook/2026-11-18_quicklook.wav acc_de', flags: ['aliasing'] }, // 2 kHz sampling of 5 kHz content
    ]);
    const truncated = quality.recordings.find((r: any) => r.recording === 'nightly/2026-11-22/pump-endurance.wav');
    expect(truncated).toMatchObject({ status: 'failed', severity: 'fail' });
    expect(truncated.reason).toMatch(/cut short/);
    expect(quality.unmatched).toEqual(['nightly/2026-11-19/pump-endurance-retake.wav']);
    expect(quality.totals.channels.fail).toBe(4);
    // The 48 kHz microphone declared to 20 kHz on a converter declared alias-free to 0.45 × fs reads clean.
    const cell = quality.recordings.find((r: any) => r.recording === 'cell-sound/2026-11-20_cell-sound.wav');
    expect(cell.channels.find((c: any) => c.channel === 'mic_pump').severity).toBe('ok');
    expect(quality.totals.recordings.unreadable).toBe(1);
  });

  it('gives every flag a value, threshold, severity, evidence and message, and validates against schemas/quality.schema.json', () => {
    const ajv = new Ajv({ allErrors: true, strict: false });
    addFormats(ajv);
    const validate = ajv.compile(JSON.parse(readFileSync(join(repo, 'schemas', 'quality.schema.json'), 'utf8')));
    expect(validate(quality), JSON.stringify(validate.errors?.slice(0, 3))).toBe(true);
    const sat = quality.recordings.find((r: any) => r.recording === 'nightly/2026-11-19/pump-endurance.wav').channels.find((c: any) => c.channel === 'acc_de').flags.find((f: any) => f.name === 'saturation');
    expect(sat.evidence.samples).toBeGreaterThan(0);
    expect(sat.evidence.first_s).toBeGreaterThanOrEqual(0);
    expect(sat.threshold).toMatch(/fail/);
  });

  it('ends the terminal output with counts by severity and every failed channel with its message', () => {
    expect(stdout).toMatch(/quality: 4 channels fail, 0 warn, \d+ with notes, \d+ ok/);
    expect(stdout).toMatch(/FAIL\s+nightly\/2026-11-21\/pump-endurance\.wav pressure: flatline: .*disconnected sensor/);
    expect(stdout).toMatch(/FAIL\s+quicklook\/2026-11-18_quicklook\.wav acc_de: aliasing: .*appears at 1000 Hz/);
  });

  it('warns or fails only on the planted defects: every other finding is a note (no figure at risk)', () => {
    const flagged = quality.recordings.flatMap((r: any) => r.channels.filter((c: any) => c.severity === 'warn' || c.severity === 'fail').map((c: any) => `${r.recording} ${c.channel}`));
    expect(flagged).toEqual(['cell-sound/2026-11-20_cell-sound.wav mic_spare', 'nightly/2026-11-19/pump-endurance.wav acc_de', 'nightly/2026-11-21/pump-endurance.wav pressure', 'quicklook/2026-11-18_quicklook.wav acc_de']);
    expect(quality.totals.channels.warn).toBe(0);
  });

  it('stores the pictures\' data of a channel to check, not pictures: the report draws only those it shows', async () => {
    const stored: { recording: string; channel: string; kept: string[] }[] = [];
    for await (const e of storedEntries(out)) {
      (e.groups.quality?.evidence ?? []).forEach((ev, c) => { if (ev) stored.push({ recording: e.recording, channel: e.base!.channels[c].name, kept: Object.keys(ev) }); });
    }
    const flagged = quality.recordings.flatMap((r: any) => r.channels.filter((c: any) => c.severity === 'warn' || c.severity === 'fail').map((c: any) => `${r.recording} ${c.channel}`));
    expect(stored.map((x) => `${x.recording} ${x.channel}`).sort()).toEqual(flagged.sort());
    expect(stored.every((x) => x.kept.join() === 'data')).toBe(true);
  });

  it('renders in headless Chromium with no console errors and shows every channel to check or not to use, with its pictures', async () => {
    const browser = await launchBrowser();
    try {
      const { page, errors } = await openPage(browser, join(out, 'quality.html'));
      // One entry per channel and flag; on the sample archive each such channel is flagged on one recording, the entry's latest.
      const shown = await page.locator('section.channel').evaluateAll((els) => els.map((e) => `${e.getAttribute('data-recording')} ${e.getAttribute('data-channel')} ${e.getAttribute('data-flag')} ${e.getAttribute('data-severity')} ${e.getAttribute('data-count')}`));
      const flags = quality.recordings.flatMap((r: any) => r.channels.flatMap((c: any) => c.flags.filter((f: any) => f.severity === 'warn' || f.severity === 'fail').map((f: any) => `${r.recording} ${c.channel} ${f.name} ${f.severity} 1`)));
      expect(shown.sort()).toEqual(flags.sort());
      const notOk = quality.recordings.flatMap((r: any) => r.channels.filter((c: any) => c.severity === 'warn' || c.severity === 'fail').map((c: any) => `${r.recording} ${c.channel}`));
      // Notes are listed apart, without pictures.
      expect(await page.locator('table.notes tr').count()).toBe(1 + quality.recordings.flatMap((r: any) => r.channels.filter((c: any) => c.severity === 'note')).length);
      // Three pictures (histogram, spectrum, trend) for each, drawn as SVG; the disconnected transducer's constant signal
      // has no spectrum, which is said in the spectrum's place.
      expect(await page.locator('section.channel .charts svg').count()).toBe(3 * notOk.length - 1);
      expect(await page.locator('section.channel[data-channel="pressure"] .charts .no-chart').textContent()).toMatch(/constant signal has no spectrum/);
      expect(await page.locator('text=not readable').count()).toBe(1);
      // The clipped channel's value is its share of samples in per cent, beside a threshold in per cent (fraction × 100).
      const sat = quality.recordings.find((r: any) => r.recording === 'nightly/2026-11-19/pump-endurance.wav').channels.find((c: any) => c.channel === 'acc_de').flags.find((f: any) => f.name === 'saturation');
      const satRow = page.locator('section.channel[data-recording="nightly/2026-11-19/pump-endurance.wav"][data-channel="acc_de"][data-flag="saturation"] table.latest tr[data-recording]');
      expect(await satRow.locator('td').nth(2).textContent()).toBe(`${Number((sat.value * 100).toPrecision(4))} % of samples at the limits`);
      expect(await satRow.locator('td').nth(3).textContent()).toMatch(/ %/);
      // One unreadable recording and one unmatched file, each in the singular.
      expect(await page.locator('.tile', { hasText: 'unreadable' }).textContent()).toBe('1recording unreadable');
      expect(await page.locator('.tile', { hasText: 'unmatched' }).textContent()).toBe('1file unmatched');
      mkdirSync(join(repo, 'test', 'artifacts'), { recursive: true });
      // The data-quality part follows what changed: pictured from its first heading.
      await page.locator('h2', { hasText: 'Data quality' }).evaluate((h) => h.scrollIntoView({ block: 'start' }));
      await page.screenshot({ path: join(repo, 'test', 'artifacts', 'quality-report.png'), fullPage: false });
      await page.locator('section.channel[data-severity=fail]').first().screenshot({ path: join(repo, 'test', 'artifacts', 'quality-report-channel.png') });
      expect(errors).toEqual([]);
    } finally {
      await browser.close();
    }
  });
});
