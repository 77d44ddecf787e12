// The "what changed" pictures: spectra on a logarithmic frequency axis without the 0 Hz bin, a level ramp whose lightness
// falls from the quietest level to the loudest (so it reads in greyscale), and trend markers whose shape, not only their colour,
// tells changed from alarm. Rendered by Chromium on the sample archive with a declared alarm limit.
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { launchBrowser, openPage } from './browser.js';
import { LEVEL_RAMP } from '../pipeline/outputs/colours.js';
import { frequencyTicks } from '../pipeline/outputs/frequency-axis.js';
import { markerOf } from '../pipeline/outputs/trend-markers.js';
import { bandCentre, logBands, welchBands } from '../pipeline/trends/log-bands.js';
import { quern, readJson, repo, sampleArchiveCopy } from './helpers.js';

// sRGB to CIE L*: the sRGB transfer function and the Y row of the sRGB-to-XYZ matrix, D65 white (IEC 61966-2-1:1999, 5.2),
// then L* = 116 f(Y/Yn) − 16 with f the cube root above (6/29)³ and its linear segment below (CIE 15:2004, 8.2.1).
function lightness(colour: string): number {
  const m = /^#([0-9a-f]{6})$/i.exec(colour) ?? /^rgb\((\d+),\s*(\d+),\s*(\d+)\)$/.exec(colour);
  if (!m) throw new Error(`not an sRGB colour: ${colour}`);
  const [r, g, b] = m.length === 2 ? [0, 2, 4].map((i) => parseInt(m[1].slice(i, i + 2), 16)) : [m[1], m[2], m[3]].map(Number);
  const linear = (c: number) => (c / 255 <= 0.04045 ? c / 255 / 12.92 : ((c / 255 + 0.055) / 1.055) ** 2.4);
  const y = 0.2126 * linear(r) + 0.7152 * linear(g) + 0.0722 * linear(b);
  const f = y > (6 / 29) ** 3 ? Math.cbrt(y) : y / (3 * (6 / 29) ** 2) + 4 / 29;
  return 116 * f - 16;
}

describe('the level ramp of the spectra across recordings', () => {
  it('converts sRGB to L* as the standards do: white 100, black 0, the sRGB primaries 53.24, 87.73, 32.30, mid grey 53.59 (from memory)', () => {
    expect(lightness('#ffffff')).toBeCloseTo(100, 6);
    expect(lightness('#000000')).toBeCloseTo(0, 6);
    expect(lightness('#ff0000')).toBeCloseTo(53.24, 1);
    expect(lightness('#00ff00')).toBeCloseTo(87.73, 1);
    expect(lightness('#0000ff')).toBeCloseTo(32.30, 1);
    expect(lightness('#808080')).toBeCloseTo(53.59, 1);
  });

  it('falls in lightness from end to end, anchor by anchor, over more than 60 L* (greyscale and colour-blind reading)', () => {
    const l = LEVEL_RAMP.map(lightness);
    for (let i = 1; i < l.length; i++) expect(l[i], `${LEVEL_RAMP[i]} after ${LEVEL_RAMP[i - 1]}`).toBeLessThan(l[i - 1] - 5);
    expect(l[0] - l[l.length - 1]).toBeGreaterThan(60);
  });
});

describe('the spectra\'s log frequency axis', () => {
  it('ticks at 1-2-5 in each decade, decades alone where those crowd, finer steps within a decade (common practice)', () => {
    expect(frequencyTicks(3, 600)).toEqual([5, 10, 20, 50, 100, 200, 500]);
    expect(frequencyTicks(1.5, 6400)).toEqual([10, 100, 1000]);
    expect(frequencyTicks(0.01, 1e7)).toEqual([0.01, 1, 100, 1e4, 1e6]);
    expect(frequencyTicks(110, 190)).toEqual([150]);
    expect(frequencyTicks(0.25, 0.9)).toEqual([0.3, 0.4, 0.5, 0.6, 0.8]);
  });

  it('leaves the 0 Hz bin out, keeps each low bin at its own frequency k·df and merges high ones, keeping the power over them', () => {
    // Invented: a falling density with a tone in bin 20, 2049 bins of 3.125 Hz (a 4096-point Welch spectrum at 12.8 kHz).
    const df = 3.125, density = Float64Array.from({ length: 2049 }, (_, k) => (k === 20 ? 1 : 1e-3 / (1 + k)));
    density[0] = 1e6; // a DC bin that would dwarf the rest: it must not show
    const s = welchBands({ df, density }, 256);
    expect(s.density.length).toBeLessThanOrEqual(257);
    expect(s.edges[0]).toBe(0.5 * df);
    expect(s.edges[s.edges.length - 1]).toBe(2048.5 * df);
    expect(bandCentre(s, 0)).toBe(df); // bin 1 alone, at its frequency
    expect(Math.max(...s.density)).toBe(1); // the tone kept in a band of its own
    expect(bandCentre(s, s.density.indexOf(1))).toBe(20 * df);
    // The integral of the density over the bands equals the sum over bins 1 … 2048 times df (rectangle rule, common practice).
    let bands = 0, bins = 0;
    for (let k = 0; k < s.density.length; k++) bands += s.density[k] * (s.edges[k + 1] - s.edges[k]);
    for (let k = 1; k < density.length; k++) bins += density[k] * df;
    expect(Math.abs(bands / bins - 1)).toBeLessThan(1e-6); // float32 densities
    // Equal in ratio: every band but the last at least (top/bottom)^(1/256) wide, so the top is not hundreds of slivers.
    const ratio = (s.edges[s.edges.length - 1] / s.edges[0]) ** (1 / 256);
    for (let k = 0; k < s.density.length - 1; k++) expect(s.edges[k + 1] / s.edges[k]).toBeGreaterThanOrEqual(ratio);
    // Merged again for the spectrogram: fewer bands, the same power.
    const coarse = logBands(s.edges, s.density, 80);
    expect(coarse.density.length).toBeLessThanOrEqual(81);
    let again = 0;
    for (let k = 0; k < coarse.density.length; k++) again += coarse.density[k] * (coarse.edges[k + 1] - coarse.edges[k]);
    expect(Math.abs(again / bands - 1)).toBeLessThan(1e-6);
  });
});

describe('the trend markers', () => {
  it('give changed and alarm shapes of their own, over the baseline\'s and a later recording\'s, and unusable data its own', () => {
    expect(markerOf({ usable: true, verdict: 'alarm', baseline: false })).toBe('alarm');
    expect(markerOf({ usable: true, verdict: 'changed', baseline: true })).toBe('changed');
    expect(markerOf({ usable: true, verdict: 'steady', baseline: true })).toBe('baseline');
    expect(markerOf({ usable: true, verdict: null, baseline: false })).toBe('later');
    expect(markerOf({ usable: false, verdict: null, baseline: false })).toBe('off the scale');
  });
});

describe('the pictures on the sample archive, in Chromium', () => {
  let out = '', quality: any;
  beforeAll(() => {
    const archive = sampleArchiveCopy(), spec = join(archive, '..', 'limits.yaml');
    out = join(archive, '..', 'out');
    // A warn and an alarm limit on the drive-end envelope, which the last nights cross (see the sample archive's README).
    writeFileSync(spec, readFileSync(join(repo, 'schemas', 'reduction.default.yaml'), 'utf8').replace(/^trends: \{\}.*$/m, 'trends: { limits: { env_rms: [{ channel: acc_de, warn: 2, alarm: 4 }] } }'));
    quern('reduce', archive, '--out', out, '--spec', spec, '--quiet');
    quality = readJson(join(out, 'quality.json'));
  });

  it('draws changed and alarm in different shapes, names both in the key, spectra on a log axis in Hz and kHz, and the ramp darkening with level', async () => {
    const env = quality.changes.items.find((c: any) => c.channel === 'acc_de' && c.feature === 'env_rms');
    expect(env.verdict).toBe('alarm');
    const browser = await launchBrowser();
    try {
      const { page, errors } = await openPage(browser, join(out, 'quality.html'), { width: 1300, height: 1300 });
      const section = page.locator('section.change-channel[data-channel="acc_de"]');
      const charts = section.locator('.charts > svg');
      const count = await charts.count();

      // The envelope's history: the alarm night and the changed night before it, told apart by shape (a cross of 12 corners, a
      // diamond of 4), not by colour alone.
      const symbols = await charts.first().locator('path[aria-roledescription="point"]').evaluateAll((els) => els.map((e) => ({ label: e.getAttribute('aria-label') ?? '', d: e.getAttribute('d') ?? '' })));
      const corners = (d: string) => d.split(/[LMZ]/i).filter((p) => p.trim()).length;
      const on = (day: string) => symbols.find((s) => s.label.includes(day))!;
      expect(corners(on('Nov 21').d)).toBe(12);
      expect(corners(on('Nov 20').d)).toBe(4);
      const key = section.locator('p.key');
      expect(await key.locator('svg[aria-label="changed"]').count()).toBeGreaterThan(0);
      expect(await key.locator('svg[aria-label="alarm"]').count()).toBeGreaterThan(0);
      expect(await key.textContent()).toMatch(/changed.*alarm/);

      // A log axis places each decade at the same distance (the definition of a logarithmic scale; common practice).
      const ticks = async (chart: number, along: 'x' | 'y') => {
        const texts = charts.nth(chart).locator(`[aria-roledescription="axis"][aria-label^="${along.toUpperCase()}-axis"]`).locator('text');
        return (await texts.evaluateAll((els) => els.map((e) => ({ text: e.textContent ?? '', at: e.getAttribute('transform') ?? '' }))))
          .filter((t) => /Hz$/.test(t.text))
          .map((t) => ({ text: t.text, at: Number(/translate\(([-\d.]+),([-\d.]+)\)/.exec(t.at)![along === 'x' ? 1 : 2]) }));
      };
      for (const [chart, along] of [[count - 2, 'x'], [count - 1, 'y']] as const) {
        const t = await ticks(chart, along);
        expect(t.map((x) => x.text)).toEqual(['10 Hz', '100 Hz', '1 kHz']);
        expect(Math.abs(Math.abs(t[1].at - t[0].at) - Math.abs(t[2].at - t[1].at))).toBeLessThan(0.5);
      }
      const titles = await section.locator('.charts').textContent();
      expect(titles).toMatch(/0 Hz bin not shown[\s\S]*0 Hz bin not shown/);
      // The spectrogram says how many recordings it covers (the latest, at most a fixed number).
      expect(titles).toMatch(/Spectra across recordings\s*the latest \d+ usable recordings/);

      // The spectrogram's cells: lighter for quieter levels, from the fills Chromium paints (L* per IEC 61966-2-1 and CIE 15).
      const cells = await charts.nth(count - 1).locator('path[aria-roledescription="rect mark"]').evaluateAll((els) => els.map((e) => ({ label: e.getAttribute('aria-label') ?? '', fill: getComputedStyle(e).fill })));
      const byLevel = cells.map((c) => ({ level: Number(/: ([^:;]+)$/.exec(c.label)![1].replace('−', '-')), l: lightness(c.fill) })).sort((a, b) => a.level - b.level);
      expect(byLevel.length).toBeGreaterThan(100);
      for (let i = 1; i < byLevel.length; i++) expect(byLevel[i].l, `level ${byLevel[i].level} dB`).toBeLessThanOrEqual(byLevel[i - 1].l + 0.5);
      expect(byLevel[0].l - byLevel[byLevel.length - 1].l).toBeGreaterThan(50);

      mkdirSync(join(repo, 'test', 'artifacts'), { recursive: true });
      await page.addStyleTag({ content: 'html { filter: grayscale(1); }' });
      await section.screenshot({ path: join(repo, 'test', 'artifacts', 'quality-report-changes-greyscale.png') });
      expect(errors).toEqual([]);
    } finally {
      await browser.close();
    }
  });
});
