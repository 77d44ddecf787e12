// quality.html folds a channel's repeated finding into one entry per channel and flag, and says which run its "new"
// marks belong to. Invented: a test cell's three accelerometers over six nights; acc_dead's sensor is disconnected every
// night (exactly zero), acc_clip clips on night 3 only, acc_ok is clean. Run with the real command line.
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { encodeWav } from '../scripts/wav-file.js';
import { addFolds, cutRows, FOLD_ROWS, type FlagFold } from '../pipeline/outputs/flag-folds.js';
import { foldEntry } from '../pipeline/outputs/report-html.js';
import { launchBrowser, openPage } from './browser.js';
import { quern, readJson, tempDir } from './helpers.js';

const FS = 8000, NIGHTS = 6, CLIPPED = 3;
const day = (n: number) => `2026-06-${String(n).padStart(2, '0')}`;

/**
 * Night n: acc_dead exactly zero (a sensor that does not move gives no converter step at all); acc_clip a 90 Hz tone at
 * 0.4 of the ±100 m/s² range, or on the clipped night at 1.6 of it, cut at full scale (a signal beyond the converter's
 * range sits on its extreme codes: common practice); acc_ok a 60 Hz tone at 0.3 of the range. Each with seeded noise.
 */
function night(n: number): Buffer {
  let a = 300 + n;
  const u = () => { a = (a * 1103515245 + 12345) >>> 0; return a / 4294967296; };
  const dead = new Float64Array(FS), clip = new Float64Array(FS), ok = new Float64Array(FS);
  for (let i = 0; i < FS; i++) {
    clip[i] = Math.max(-1, Math.min(1, (n === CLIPPED ? 1.6 : 0.4) * Math.sin(2 * Math.PI * 90 * i / FS) + 0.02 * (u() - 0.5)));
    ok[i] = 0.3 * Math.sin(2 * Math.PI * 60 * i / FS) + 0.02 * (u() - 0.5);
  }
  return encodeWav({ sampleRate: FS, channels: [dead, clip, ok], origination: new Date(Date.UTC(2026, 5, n, 2)) });
}

const channel = (name: string) => `      - { name: ${name}, quantity: acceleration, unit: m/s^2, scale: 100, range: [-100, 100], bits: 16, max_frequency_hz: 1000 }`;
const ARCHIVE = `groups:\n  - name: cell\n    match: "cell/*.wav"\n    sample_rate: ${FS}\n    channels:\n${['acc_dead', 'acc_clip', 'acc_ok'].map(channel).join('\n')}\n`;

/** The page's entries as the browser reads them: channel, flag, count, latest recording, earlier recordings listed, new. */
async function entriesOf(file: string) {
  const browser = await launchBrowser();
  try {
    const { page, errors } = await openPage(browser, file);
    const entries = await page.locator('section.channel').evaluateAll((els) => els.map((e) => ({
      channel: e.getAttribute('data-channel'), flag: e.getAttribute('data-flag'), severity: e.getAttribute('data-severity'),
      count: Number(e.getAttribute('data-count')), of: Number(e.getAttribute('data-of')), latest: e.getAttribute('data-recording'), new: e.hasAttribute('data-new'),
      heading: e.querySelector('h3')!.textContent,
      listed: [...e.querySelectorAll('details table.earlier tr[data-recording]')].map((r) => r.getAttribute('data-recording')),
      // A collapsed list: its rows are in the page but not shown until opened.
      collapsed: e.querySelector('details') ? !e.querySelector('details')!.hasAttribute('open') && !(e.querySelector('details table.earlier') as HTMLElement).checkVisibility() : null,
    })));
    const written = await page.locator('header p.written').getAttribute('data-run');
    // Every overview cell to look at links to an entry of the page.
    const links = await page.locator('table.overview a').evaluateAll((as) => as.map((a) => a.getAttribute('href')!.slice(1)));
    const ids = new Set(await page.locator('section.channel').evaluateAll((els) => els.map((e) => e.id)));
    return { entries, written, links, ids, errors };
  } finally {
    await browser.close();
  }
}

describe('quality.html: one entry per channel and flag', () => {
  const root = tempDir(), archive = join(root, 'archive'), out = join(root, 'out');
  mkdirSync(join(archive, 'cell'), { recursive: true });
  writeFileSync(join(archive, 'archive.yaml'), ARCHIVE);
  writeFileSync(join(root, 'spec.yaml'), 'statistics: {}\n');
  for (let n = 1; n <= NIGHTS; n++) writeFileSync(join(archive, 'cell', `${day(n)}.wav`), night(n));
  const reduce = () => { const r = quern('reduce', archive, '--out', out, '--spec', join(root, 'spec.yaml'), '--jobs', '1'); if (r.code !== 0) throw new Error(r.stderr); return r; };
  const first = reduce(), firstRun = readJson(join(out, 'run.json')).run_id, firstPage = readFileSync(join(out, 'quality.html'), 'utf8');
  const again = reduce(), againRun = readJson(join(out, 'run.json'));

  it('folds the sensor dead every night into one entry counting its nights, and keeps the one clipped night apart', async () => {
    const q = readJson(join(out, 'quality.json'));
    // What quality.json holds per recording, gathered by hand: the reference for the page's entries.
    const failed = (ch: string) => q.recordings.filter((r: any) => r.channels.find((c: any) => c.channel === ch).flags.some((f: any) => f.severity === 'fail')).map((r: any) => r.recording);
    expect(failed('acc_dead')).toHaveLength(NIGHTS);
    expect(failed('acc_clip')).toEqual([`cell/${day(CLIPPED)}.wav`]);
    expect(failed('acc_ok')).toEqual([]);
    const flagsOf = (ch: string) => [...new Set(q.recordings.flatMap((r: any) => r.channels.find((c: any) => c.channel === ch).flags.filter((f: any) => f.severity === 'fail' || f.severity === 'warn').map((f: any) => f.name)))];

    const { entries, errors, links, ids } = await entriesOf(join(out, 'quality.html'));
    expect(errors).toEqual([]);
    const dead = entries.filter((e) => e.channel === 'acc_dead'), clip = entries.filter((e) => e.channel === 'acc_clip');
    // One entry per flag of the dead channel, not one per night; each counts all six nights, the latest first, the other five listed and collapsed.
    expect(dead.map((e) => e.flag).sort()).toEqual(flagsOf('acc_dead').sort());
    for (const e of dead) {
      expect(e).toMatchObject({ severity: 'fail', count: NIGHTS, of: NIGHTS, latest: `cell/${day(NIGHTS)}.wav`, collapsed: true });
      expect(e.heading).toMatch(new RegExp(`: ${e.flag} in ${NIGHTS} of ${NIGHTS} recordings$`));
      expect(e.listed).toEqual([5, 4, 3, 2, 1].map((n) => `cell/${day(n)}.wav`));
    }
    expect(dead.map((e) => e.flag)).toContain('flatline');
    // The clip is its own entry: one night of six, nothing else listed.
    expect(clip.map((e) => e.flag)).toContain('saturation');
    for (const e of clip) expect(e).toMatchObject({ severity: 'fail', count: 1, of: NIGHTS, latest: `cell/${day(CLIPPED)}.wav`, listed: [], collapsed: null });
    expect(entries.filter((e) => e.channel === 'acc_ok')).toEqual([]);
    expect(entries).toHaveLength(dead.length + clip.length);
    // First run into the folder: every entry new. Order: unusable, then the newest latest recording first.
    expect(entries.every((e) => e.new)).toBe(true);
    expect(entries.map((e) => e.latest)).toEqual([...dead.map((e) => e.latest), ...clip.map((e) => e.latest)]);
    expect(links.length).toBe(NIGHTS + 1);
    for (const l of links) expect(ids.has(l)).toBe(true);
  });

  it('an unchanged re-run leaves the page, which names the run its "new" marks belong to; the re-run tells nothing new', async () => {
    expect(first.stdout).toMatch(/; NEW$/m);
    expect(again.stdout).not.toMatch(/NEW/);
    expect(again.stdout).toContain(`outputs: unchanged (same digest as run ${firstRun}); not rewritten, so quality.html's and quality.json's “new” marks are that run's`);
    expect(againRun.outputs).toMatchObject({ rewritten: false, written_by_run: firstRun });
    expect(againRun.run_id).not.toBe(firstRun);
    expect(readFileSync(join(out, 'quality.html'), 'utf8')).toBe(firstPage);
    const { written, entries } = await entriesOf(join(out, 'quality.html'));
    expect(written).toBe(firstRun);
    expect(firstPage).toMatch(new RegExp(`Written by run ${firstRun} at ${readJson(join(out, 'quality.json')).generated.replaceAll('.', '\\.')}\\. “new” marks what that run found`));
    expect(entries.some((e) => e.new)).toBe(true);
  });

  it('a night that brings something rewrites the page: the repeats are no longer new, and the page names its own run', async () => {
    writeFileSync(join(archive, 'cell', `${day(NIGHTS + 1)}.wav`), night(NIGHTS + 1));
    const third = reduce(), run = readJson(join(out, 'run.json'));
    expect(run.outputs).toMatchObject({ rewritten: true, written_by_run: run.run_id });
    expect(third.stdout).not.toMatch(/NEW/);
    const { written, entries } = await entriesOf(join(out, 'quality.html'));
    expect(written).toBe(run.run_id);
    expect(entries.some((e) => e.new)).toBe(false);
    for (const e of entries.filter((x) => x.channel === 'acc_dead')) expect(e).toMatchObject({ count: NIGHTS + 1, of: NIGHTS + 1, latest: `cell/${day(NIGHTS + 1)}.wav` });
    expect(entries.find((e) => e.channel === 'acc_clip')).toMatchObject({ count: 1, of: NIGHTS + 1 });
  });
});

describe('an entry\'s size is bounded by its newest rows, not by the run', () => {
  it('keeps the newest rows and a new one past them, counts every recording, and says how many are not listed (arithmetic)', () => {
    const at = { file: 'p', offset: 0, length: 0, bodySha: '' } as never;
    const row = (n: number, fresh = false) => ({ recording: `r${String(n).padStart(4, '0')}`, start_ms: n * 1000, severity: 'fail' as const, new: fresh, cells: `<td>r${n}</td>`, at });
    const folds = new Map<string, FlagFold>();
    // 1,000 recordings arriving in slices of 10, the oldest one's flag new.
    for (let s = 0; s < 100; s++) addFolds(folds, Array.from({ length: 10 }, (_, i) => ({ group: 'g', channel: 'c', unit: 'V', flag: 'flatline', failed: 1, warned: 0, rows: [row(s * 10 + i, s * 10 + i === 0)] })));
    const f = [...folds.values()][0];
    expect(folds.size).toBe(1);
    expect(f.failed).toBe(1000);
    expect(f.rows.length).toBeLessThanOrEqual(2 * FOLD_ROWS);
    const html = foldEntry(cutRows(f), 1000);
    expect(f.rows).toHaveLength(FOLD_ROWS);
    expect(f.rows[0].recording).toBe('r0999');
    expect(f.rows.at(-1)!.recording).toBe('r0000');
    expect(html).toMatch(/in 1000 of 1000 recordings/);
    expect(html).toContain(`data-untold="${1000 - FOLD_ROWS}"`);
    expect(html).toMatch(/ data-new="true"/);
  });
});
