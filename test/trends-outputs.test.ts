// What changed, on the sample archive: the terminal and quality.html lead with the drive-end bearing, trends.parquet and
// spectra.parquet read back with DuckDB, and a nightly run over one night still compares against the baseline reduced before.
import { cpSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { beforeAll, describe, expect, it } from 'vitest';
import { launchBrowser, openPage } from './browser.js';
import { quern, readJson, repo, sampleArchiveCopy } from './helpers.js';

async function duck(sql: string): Promise<Record<string, any>[]> {
  const db = await (await DuckDBInstance.create()).connect();
  return (await db.runAndReadAll(sql)).getRowObjectsJS() as Record<string, any>[];
}

const STEADY_CHANNELS = ['acc_nde', 'mic', 'pressure', 'tacho'];

describe('trends on the sample archive', () => {
  let archive = '', out = '', stdout = '', quality: any;
  beforeAll(() => {
    archive = sampleArchiveCopy();
    out = join(archive, '..', 'out');
    stdout = quern('reduce', archive, '--out', out, '--quiet').stdout;
    quality = readJson(join(out, 'quality.json'));
  });

  it('the terminal leads with the drive-end bearing\'s changes, one line each, before the data-quality lines', () => {
    const lines = stdout.split('\n');
    const changed = lines.filter((l) => /^\s+(CHANGED|ALARM)/.test(l));
    expect(changed.length).toBeGreaterThanOrEqual(3);
    expect(changed[0]).toMatch(/CHANGED nightly acc_de env_rms .* on 2026-11-21: \+\d+\.\d dB/);
    expect(changed.every((l) => / nightly acc_de /.test(l))).toBe(true);
    expect(lines.findIndex((l) => /^\s+changes:/.test(l))).toBe(1);
    expect(lines.findIndex((l) => /^\s+changes:/.test(l))).toBeLessThan(lines.findIndex((l) => /^\s+quality:/.test(l)));
  });

  it('quality.json lists the changes, the drive-end envelope and band figures among them, and no steady channel', () => {
    const items = quality.changes.items;
    expect(items[0]).toMatchObject({ group: 'nightly', channel: 'acc_de', feature: 'env_rms', verdict: 'changed', recording: 'nightly/2026-11-21/pump-endurance.wav' });
    const de = items.filter((c: any) => c.channel === 'acc_de').map((c: any) => c.feature);
    for (const f of ['env_rms', 'band_20_200_rms', 'band_200_1000_rms']) expect(de).toContain(f);
    expect(items.filter((c: any) => c.channel !== 'acc_de')).toEqual([]);
    expect(quality.changes.baseline).toMatch(/first 3 usable recordings/);
  });

  it('trends.parquet reads back with DuckDB: the values of features.parquet against the median of the first three nights', async () => {
    const t = join(out, 'trends.parquet'), f = join(out, 'features.parquet');
    const columns = (await duck(`describe select * from '${t}'`)).map((r) => r.column_name);
    expect(columns).toEqual(readJson(join(repo, 'schemas', 'features.table.json')).tables['trends.parquet'].columns.map((c: any) => c.name));
    // Every value is the features.parquet figure of its recording and channel.
    const mismatched = await duck(`select t.* from '${t}' t join '${f}' f using (recording, channel) where t.value is distinct from (case t.feature when 'rms' then f.rms when 'peak' then f.peak when 'crest_factor' then f.crest_factor when 'kurtosis' then f.kurtosis when 'band_20_200_rms' then f.band_20_200_rms when 'band_200_1000_rms' then f.band_200_1000_rms when 'velocity_10_1000_rms' then f.velocity_10_1000_rms when 'env_rms' then f.env_rms end)`);
    expect(mismatched).toEqual([]);
    const [base] = await duck(`select median(env_rms) m from (select env_rms from '${f}' where "group" = 'nightly' and channel = 'acc_de' order by start_time limit 3)`);
    const [row] = await duck(`select * from '${t}' where channel = 'acc_de' and feature = 'env_rms' and recording like '%2026-11-21%'`);
    expect(row.baseline).toBe(base.m);
    expect(row.change_db).toBeCloseTo(20 * Math.log10(row.value / base.m), 12);
    expect(row.verdict).toBe('changed');
    const noisy = await duck(`select channel, feature, verdict from '${t}' where "group" = 'nightly' and channel in (${STEADY_CHANNELS.map((c) => `'${c}'`).join(', ')}) and verdict is distinct from 'steady' and quality <> 'fail'`);
    expect(noisy).toEqual([]);
    // The disconnected pressure transducer and the clipped night have no verdict: their figures describe the defect.
    expect(await duck(`select distinct verdict from '${t}' where quality = 'fail'`)).toEqual([{ verdict: null }]);
  });

  it('spectra.parquet holds every bin of every channel\'s Welch spectrum, which integrates to the channel\'s variance (Parseval)', async () => {
    const s = join(out, 'spectra.parquet'), f = join(out, 'features.parquet');
    expect((await duck(`describe select * from '${s}'`)).map((r) => r.column_name)).toEqual(['recording', 'channel', 'unit', 'frequency_hz', 'density']);
    const bins = await duck(`select recording, channel, count(*)::int n, max(frequency_hz) top, min(frequency_hz) low from '${s}' where recording like 'nightly/%' group by all`);
    expect(bins.length).toBe(6 * 5);
    for (const b of bins) expect(b).toMatchObject({ n: 4096 / 2 + 1, low: 0, top: 12800 / 2 });
    const power = await duck(`select f.recording, f.channel, f.std * f.std variance, sum(s.density) * 12800 / 4096 integral from '${s}' s join '${f}' f using (recording, channel) where f.recording like 'nightly/%' and f.std > 0 group by all`);
    for (const p of power) expect(Math.abs(p.integral / p.variance - 1), `${p.recording} ${p.channel}`).toBeLessThan(0.03);
  });

  it('quality.html opens with what changed, drive-end first, each channel with its trends, spectra and spectrogram; rendered by Chromium', async () => {
    const browser = await launchBrowser();
    try {
      const { page, errors } = await openPage(browser, join(out, 'quality.html'), { width: 1300, height: 1300 });
      const headings = await page.locator('main h2').allTextContents();
      expect(headings[0]).toBe('What changed');
      expect(headings.indexOf('What changed')).toBeLessThan(headings.findIndex((h) => h.startsWith('Data quality')));
      const first = page.locator('section.change-channel').first();
      expect(await first.getAttribute('data-channel')).toBe('acc_de');
      // One trend per changed feature, then the latest spectrum over the baseline's, then the spectra across the nights.
      const features = quality.changes.items.filter((c: any) => c.channel === 'acc_de').length;
      expect(await first.locator('.charts svg').count()).toBe(features + 2);
      expect(await page.locator('section.change-channel').count()).toBe(1);
      mkdirSync(join(repo, 'test', 'artifacts'), { recursive: true });
      await page.screenshot({ path: join(repo, 'test', 'artifacts', 'quality-report-changes.png'), fullPage: false });
      await first.screenshot({ path: join(repo, 'test', 'artifacts', 'quality-report-changes-channel.png') });
      expect(errors).toEqual([]);
    } finally {
      await browser.close();
    }
  });

  it('a baseline formed again from a date (the drive-end sensor replaced) is said on the terminal, in quality.json and in the picture', async () => {
    const restarted = join(archive, '..', 'restarted-out'), spec = join(archive, '..', 'restart.yaml');
    cpSync(out, restarted, { recursive: true });
    const defaults = readFileSync(join(repo, 'schemas', 'reduction.default.yaml'), 'utf8');
    expect(defaults).toMatch(/^trends: \{\}/m);
    writeFileSync(spec, defaults.replace(/^trends: \{\}.*$/m, 'trends: { baseline: { first: 3, restart: [{ channel: acc_de, group: nightly, from: 2026-11-17 }] } }'));
    const r = quern('reduce', archive, '--out', restarted, '--spec', spec, '--quiet');
    expect(r.stdout).toContain('  baseline formed again for nightly acc_de from 2026-11-17: 1 stored channel history (trends.baseline.restart)');
    expect(r.stdout).toMatch(/CHANGED nightly acc_de env_rms/); // the 21st still stands out against the 17th to 19th
    const q = readJson(join(restarted, 'quality.json'));
    expect(q.changes.baseline_restarts).toEqual([{ restart: 'nightly acc_de from 2026-11-17', histories: 1 }]);
    const browser = await launchBrowser();
    try {
      const { page, errors } = await openPage(browser, join(restarted, 'quality.html'), { width: 1300, height: 1300 });
      const first = page.locator('section.change-channel').first();
      expect(await first.getAttribute('data-channel')).toBe('acc_de');
      expect(await first.locator('.charts svg').count()).toBeGreaterThan(2);
      await first.screenshot({ path: join(repo, 'test', 'artifacts', 'quality-report-changes-restarted.png') });
      expect(errors).toEqual([]);
    } finally {
      await browser.close();
    }
  });

  it('--exit-on tells a nightly job\'s scheduler: code 3 when a feature changed, as asked, and the usual code when nothing reaches the level', () => {
    const again = join(archive, '..', 'exit-on-out');
    cpSync(out, again, { recursive: true });
    const changed = quern('reduce', archive, '--out', again, '--exit-on', 'changed', '--quiet');
    expect(changed.code).toBe(3);
    const reached = quality.changes.items.length;
    expect(changed.stdout).toContain(`  exit code 3: ${reached} channel features changed (--exit-on changed); 1 recording failed as well`);
    // No alarm limit is declared, so no feature can be at one: the code is the run's own (1: the planted truncated recording).
    const alarm = quern('reduce', archive, '--out', again, '--exit-on', 'alarm', '--quiet');
    expect(alarm.code).toBe(1);
    expect(alarm.stdout).not.toContain('exit code 3');
    const refused = quern('reduce', archive, '--out', again, '--exit-on', 'alarm,often');
    expect(refused.code).toBe(2);
    expect(refused.stderr).toContain('--exit-on: "alarm,often" is not changed, alarm, quiet or a comma list of them (alarm,quiet)');
    // An alarm limit on the envelope RMS, which the 21st passes (5.4 m/s²), and none of the earlier nights (0.6–3.6 m/s²).
    const spec = join(archive, '..', 'alarm.yaml');
    writeFileSync(spec, readFileSync(join(repo, 'schemas', 'reduction.default.yaml'), 'utf8').replace(/^trends: \{\}.*$/m, 'trends: { limits: { env_rms: { alarm: 5 } } }'));
    const limited = quern('reduce', archive, '--out', again, '--spec', spec, '--exit-on', 'alarm', '--quiet');
    expect(limited.code).toBe(3);
    expect(limited.stdout).toMatch(/ALARM\s+nightly acc_de env_rms 5\.44/);
    expect(limited.stdout).toContain('  exit code 3: 1 channel feature at an alarm limit (--exit-on alarm); 1 recording failed as well');
  });

  it('a nightly run over one night still holds it against the baseline reduced before, from the stored results', async () => {
    const nightly = join(archive, '..', 'nightly-out');
    cpSync(out, nightly, { recursive: true });
    const r = quern('reduce', archive, '--out', nightly, '--since', '2026-11-21', '--until', '2026-11-22', '--quiet');
    expect(r.stdout).toMatch(/CHANGED nightly acc_de env_rms/);
    const rows = await duck(`select * from '${join(nightly, 'trends.parquet')}' order by channel, feature`);
    expect(new Set(rows.map((x) => x.recording))).toEqual(new Set(['nightly/2026-11-21/pump-endurance.wav']));
    const whole = await duck(`select * from '${join(out, 'trends.parquet')}' where recording = 'nightly/2026-11-21/pump-endurance.wav' order by channel, feature`);
    expect(rows).toEqual(whole);
  });
});
