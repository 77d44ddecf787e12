// The report's pictures for many channels to check: drawn in parts by the worker threads and written out as they come,
// each section must carry its own channel's pictures. The reference is the pictures drawn straight from each stored
// entry's data with the charting code alone (one shape at a time, on this thread).
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { describe, expect, it } from 'vitest';
import { launchBrowser, openPage } from './browser.js';
import { evidenceCharts } from '../pipeline/outputs/charts.js';
import { storedEntries } from '../pipeline/plan/cache.js';
import { encodeWav } from '../scripts/wav-file.js';
import { unpackEvidence, type PackedEvidence } from '../stages/quality/evidence.js';
import { quern, tempDir } from './helpers.js';

// Invented: a misranged rig whose four accelerometers clip every night, each at its own tone; each night is declared as a
// group of its own (the rig moved between benches), so that every night's channels have entries and pictures of their own.
const RECORDINGS = 13, FS = 8000, FRAMES = 2000;
function clippedArchive(): string {
  const archive = join(tempDir(), 'archive');
  mkdirSync(archive);
  for (let r = 0; r < RECORDINGS; r++) {
    const channels = Array.from({ length: 4 }, (_, c) => Float64Array.from({ length: FRAMES }, (_, i) => Math.max(-1, Math.min(1, 1.3 * Math.sin((2 * Math.PI * (100 + 37 * r + 11 * c) * i) / FS)))));
    writeFileSync(join(archive, `night-${String(r).padStart(2, '0')}.wav`), encodeWav({ sampleRate: FS, channels, encoding: 'pcm16' }));
  }
  const channels = [1, 2, 3, 4].map((c) => `      - { name: acc${c}, quantity: acceleration, unit: m/s^2, scale: ${10 * c} }`).join('\n');
  const groups = Array.from({ length: RECORDINGS }, (_, r) => `  - name: bench-${r}\n    match: "night-${String(r).padStart(2, '0')}.wav"\n    channels:\n${channels}\n`).join('');
  writeFileSync(join(archive, 'archive.yaml'), `groups:\n${groups}`);
  return archive;
}

describe('the report\'s pictures for many channels to check', () => {
  it('puts each channel\'s own pictures in its section, across the parts the threads draw', async () => {
    const archive = clippedArchive(), out = join(archive, '..', 'out');
    expect(quern('reduce', archive, '--out', out, '--jobs', '2', '--quiet').code).toBe(0);
    const html = readFileSync(join(out, 'quality.html'), 'utf8');
    const attr = (tag: string, name: string) => new RegExp(` data-${name}="([^"]+)"`).exec(tag)![1];
    const all = [...html.matchAll(/(<section class="channel" [^>]*>)([\s\S]*?)<\/section>/g)]
      .map(([, tag, body]) => ({ at: `${attr(tag, 'recording')} ${attr(tag, 'channel')}`, charts: /<div class="charts">([\s\S]*)<\/div>\n$/.exec(body)?.[1] ?? null, above: body.includes('Pictures of this recording\'s channel: under') }));
    // A channel with two flags has two entries: its pictures under the first, the second pointing to them.
    const sections = all.filter((s) => s.charts !== null);
    expect(all.filter((s) => s.charts === null).every((s) => s.above && sections.some((p) => p.at === s.at))).toBe(true);
    expect(new Set(sections.map((s) => s.at)).size).toBe(sections.length);
    expect(sections.length).toBe(RECORDINGS * 4); // every channel clips: more than one part of pictures
    const expected = new Map<string, string>();
    for await (const e of storedEntries(out)) {
      for (const [c, ev] of (e.groups.quality?.evidence ?? []).entries()) {
        if (ev) expected.set(`${e.recording} ${e.base!.channels[c].name}`, (await evidenceCharts(unpackEvidence((ev as { data: PackedEvidence }).data), e.base!.channels[c].unit)).join(''));
      }
    }
    expect(expected.size).toBe(RECORDINGS * 4);
    for (const s of sections) expect(s.charts, s.at).toBe(expected.get(s.at));
    // Different channels' pictures differ, so a picture in the wrong section would show.
    expect(new Set(sections.map((s) => s.charts)).size).toBe(sections.length);
  });
});

// Invented: a 4 s float recording at 8 kHz; a 50 Hz tone of amplitude 2 with no samples from 1 to 2 s, a channel stuck at
// 0.25, and one missing a sample in every 5 (no stretch of 8 samples, the fewest a spectrum is taken from).
const GAP_FS = 8000, GAP_FRAMES = 4 * GAP_FS;
function gapArchive(): string {
  const archive = join(tempDir(), 'archive');
  mkdirSync(archive);
  const tone = Float64Array.from({ length: GAP_FRAMES }, (_, i) => (i >= GAP_FS && i < 2 * GAP_FS ? NaN : 2 * Math.sin((2 * Math.PI * 50 * i) / GAP_FS)));
  const stuck = new Float64Array(GAP_FRAMES).fill(0.25);
  const holed = Float64Array.from({ length: GAP_FRAMES }, (_, i) => (i % 5 === 2 ? NaN : Math.sin((2 * Math.PI * 120 * i) / GAP_FS)));
  writeFileSync(join(archive, 'night.wav'), encodeWav({ sampleRate: GAP_FS, channels: [tone, stuck, holed], encoding: 'float32' }));
  writeFileSync(join(archive, 'archive.yaml'), 'groups:\n  - name: rig\n    match: "*.wav"\n    channels:\n'
    + ['tone', 'stuck', 'holed'].map((c) => `      - { name: ${c}, quantity: acceleration, unit: m/s^2, scale: 1 }`).join('\n') + '\n');
  return archive;
}

describe('the report\'s pictures of channels with missing samples or no spectrum', () => {
  it('draws each 0.1 s window at its time with a break where none holds a sample, and says why a spectrum is missing', async () => {
    const archive = gapArchive(), out = join(archive, '..', 'out');
    expect(quern('reduce', archive, '--out', out, '--jobs', '1', '--quiet').code).not.toBe(2);
    const evidence = new Map<string, ReturnType<typeof unpackEvidence>>();
    for await (const e of storedEntries(out)) {
      for (const [c, ev] of (e.groups.quality?.evidence ?? []).entries()) if (ev) evidence.set(e.base!.channels[c].name, unpackEvidence((ev as { data: PackedEvidence }).data));
    }
    // 40 windows of 800 samples over 4 s, each at its own start; windows 10 to 19 hold no sample.
    const trend = evidence.get('tone')!.trend;
    expect(trend.window_s).toBeCloseTo(0.1, 12);
    expect(trend.rms.length).toBe(40);
    trend.rms.forEach((r, i) => {
      if (i >= 10 && i < 20) expect(r, `window ${i}`).toBeNaN();
      // A sine's RMS is its amplitude over √2 over whole periods (common practice); 0.1 s holds 5 periods of 50 Hz.
      else expect(Math.abs(r - Math.SQRT2), `window ${i}`).toBeLessThan(1e-6);
    });
    expect(evidence.get('stuck')!.noSpectrum).toMatch(/constant/);
    expect(evidence.get('holed')!.noSpectrum).toMatch(/no stretch of \d+ samples free of missing samples/);

    // windows.parquet read by DuckDB: the 1 s window without samples is null in mean, rms and peak, as the README says.
    const db = await (await DuckDBInstance.create()).connect();
    const rows = (await db.runAndReadAll(`select window_start_s, mean, rms, peak from '${join(out, 'windows.parquet')}' where channel = 'tone' order by window_start_s`)).getRowObjectsJS();
    expect(rows.map((r) => r.window_start_s)).toEqual([0, 1, 2, 3]);
    expect(rows[1]).toEqual({ window_start_s: 1, mean: null, rms: null, peak: null });
    for (const r of [rows[0], rows[2], rows[3]]) expect(Math.abs((r.rms as number) - Math.SQRT2)).toBeLessThan(1e-6);

    const browser = await launchBrowser();
    try {
      const { page, errors } = await openPage(browser, join(out, 'quality.html'));
      const section = (channel: string) => page.locator(`section.channel[data-channel="${channel}"]`);
      // The trend's axis runs to the recording's end; the line is drawn in two pieces, the second second shaded between them.
      const tone = section('tone');
      const line = await tone.locator('svg').last().locator('path[aria-roledescription="line mark"]').getAttribute('d');
      expect(line!.match(/M/g)!.length).toBe(2);
      const ticks = await tone.locator('svg').last().locator('[aria-roledescription="axis"]').first().locator('text').allTextContents();
      expect(ticks).toContain('3.5');
      expect(await tone.locator('svg').last().locator('path[aria-roledescription="rect mark"]').count()).toBe(1);
      // In the spectrum's place, a line saying why; nothing reads NaN or Infinity, in the text or the pictures' labels.
      expect(await section('stuck').locator('.no-chart').textContent()).toMatch(/constant signal has no spectrum/);
      expect(await section('holed').locator('.no-chart').textContent()).toMatch(/free of missing samples/);
      const labels = await page.locator('[aria-label]').evaluateAll((els) => els.map((e) => e.getAttribute('aria-label')).join(' '));
      expect(`${await page.locator('body').innerText()} ${labels}`).not.toMatch(/NaN|Infinity/);
      expect(errors).toEqual([]);
    } finally {
      await browser.close();
    }
  });
});
