// Trends and the measurable floor: a band figure at numerical zero (float64 or float32 rounding of a band that holds no
// content) is not put in decibels against anything. References: band and channel RMS of numpy-made nights by numpy and
// scipy.signal.welch (test/fixtures/make-floor-vectors.py, floor-vectors.json); the same recording written by soundfile as
// float64 and float32 WAV (test/fixtures/floor/). The floor, 10⁻⁶ of the channel's RMS (−120 dB), is common practice: finer
// than any converter resolves (a 24-bit converter spans about 144 dB, from memory; float32 keeps 1.2e-7 of a value).
import { copyFileSync, mkdirSync, utimesSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { describe, expect, it } from 'vitest';
import type { ReductionSpec } from '../spec/reduction.js';
import { toolVersion } from '../pipeline/declare/package-files.js';
import { groupKeys, type CacheEntry } from '../pipeline/plan/cache.js';
import { changesReport, scoreHistory, type ScoredPoint } from '../pipeline/trends/changes.js';
import { againstFloor, floorOf, FLOOR_RATIO } from '../pipeline/trends/floor.js';
import { readHistory } from '../pipeline/trends/history.js';
import { trendOptions } from '../pipeline/trends/options.js';
import { changesSummary } from '../pipeline/trends/summary.js';
import { trendPicture, type TrendPicture } from '../pipeline/trends/pictures.js';
import { svg } from '../pipeline/outputs/charts.js';
import { trendSpec } from '../pipeline/outputs/report-changes.js';
import { fixture, quern, readJson, tempDir } from './helpers.js';

interface Night { rms: number; band_20_200_rms: number; naive_change_db?: number }
const ref = readJson<{ made_by: string; histories: Record<string, Night[]>; files: Record<string, Night> }>(fixture('floor-vectors.json'));
const SPEC: ReductionSpec = { statistics: {}, spectrum: { segment: 4096, overlap: 0.5, window: 'hann' }, bands: [[20, 200]], trends: { features: ['band_*_rms'] } };

/** A stored result of one night of one accelerometer channel: its RMS (statistics) and its band RMS, quality ok. */
function entry(night: number, n: Night): CacheEntry {
  const out = (columns: Record<string, number>) => ({ columns: [columns], flags: [[]], evidence: [null], tables: {}, notes: [] });
  const start = new Date(Date.UTC(2026, 0, 1 + night, 2)).toISOString();
  return {
    recording: `nightly/night-${night + 1}.wav`, group: 'nightly', status: 'reduced', seconds: 0, frames: 1, sampleRate: 1, startTime: start, channels: 1, notes: {}, storedAt: 0,
    base: { frames: 1, sampleRate: 1, notes: [], channels: [{ name: 'acc', quantity: 'acceleration', unit: 'm/s^2' }], header: { format: 'wav', encoding: 'float64', bits: 64, start_time: start } },
    groups: { statistics: out({ rms: n.rms }), bands: out({ band_20_200_rms: n.band_20_200_rms }), quality: out({}) },
    version: toolVersion, identity: { size: 1, mtimeMs: 0, hash: null }, readAtMs: 0, declKey: '', groupKeys: groupKeys(SPEC, toolVersion),
  };
}

/** The history's points through the real path (stored entries → series → baseline of the first 3 → score), the terminal's lines, and the report's picture of it. */
async function scored(nights: Night[]): Promise<{ points: ScoredPoint[]; lines: string; picture: TrendPicture }> {
  const o = trendOptions(SPEC)!;
  const entries = nights.map((n, i) => entry(i, n));
  async function* stored() { yield* entries; }
  const h = await readHistory('(not read)', SPEC, o, new Set(entries.map((e) => e.recording)), stored());
  const features = scoreHistory(h, o);
  return { points: nights.map((_, i) => features[0].at(i)!), lines: changesSummary(changesReport(h, features, o)).join('\n'), picture: trendPicture(features[0], o) };
}

const last = <T>(a: T[]) => a[a.length - 1];
const median3 = (a: number[]) => [...a].sort((x, y) => x - y)[1];

describe('the measurable floor of a band figure', () => {
  it('the fixture holds figures at numerical zero and at real levels, and the old score on the rounding would read a change', () => {
    expect(ref.made_by).toMatch(/numpy .*scipy .*soundfile/);
    const h = ref.histories;
    for (const n of h.rounding.slice(0, 4)) expect(n.band_20_200_rms / n.rms).toBeLessThan(1e-12);
    expect(last(h.rounding).band_20_200_rms / last(h.rounding).rms).toBeLessThan(FLOOR_RATIO);
    expect(last(h.rounding).naive_change_db!).toBeGreaterThan(60);
    expect(last(h.appears).naive_change_db!).toBeGreaterThan(200);
  });

  it('float64 rounding then float32 rounding of an empty band: steady, no change in dB and no score', async () => {
    const { points, lines } = await scored(ref.histories.rounding);
    const p = last(points);
    expect(p.verdict).toBe('steady');
    expect([p.changeDb, p.score]).toEqual([null, null]);
    expect(p.floor?.below).toBe('both');
    expect(p.floor!.level).toBeCloseTo(FLOOR_RATIO * last(ref.histories.rounding).rms, 12);
    expect(lines).toMatch(/0 changed/);
  });

  it('content appearing in a band that held only rounding: changed, by at least its rise over the floor, with the latest value', async () => {
    const nights = ref.histories.appears;
    const { points, lines } = await scored(nights);
    const p = last(points), floor = FLOOR_RATIO * median3(nights.slice(0, 3).map((n) => n.rms));
    expect(p.verdict).toBe('changed');
    expect(p.floor).toEqual({ below: 'baseline', level: expect.closeTo(floor, 12) });
    expect(p.changeDb!).toBeCloseTo(20 * Math.log10(last(nights).band_20_200_rms / floor), 4);
    expect(p.score).toBeNull();
    expect(lines).toMatch(/CHANGED nightly acc band_20_200_rms 0\.00707\d* m\/s\^2 on 2026-01-05: at least \+86\.\d dB from a baseline below the measurable floor 3\.53\d*e-7 m\/s\^2/);
    expect(lines).not.toMatch(/e\+1\d|\+2\d\d\.\d dB/);
  });

  it('a band at real levels is scored as ever: +8 dB against the median reads changed, no floor involved', async () => {
    const nights = ref.histories.real;
    const { points } = await scored(nights);
    const p = last(points);
    expect(p.floor).toBeUndefined();
    expect(p.verdict).toBe('changed');
    expect(p.changeDb!).toBeCloseTo(20 * Math.log10(last(nights).band_20_200_rms / median3(nights.slice(0, 3).map((n) => n.band_20_200_rms))), 9);
    expect(points.slice(0, 4).map((q) => q.verdict)).toEqual(['steady', 'steady', 'steady', 'steady']);
  });

  it('content vanishing to rounding: changed, a fall of at least the baseline over the floor, not −235 dB', async () => {
    const nights = ref.histories.vanishes;
    const { points, lines } = await scored(nights);
    const p = last(points), floor = FLOOR_RATIO * last(nights).rms;
    expect(p.verdict).toBe('changed');
    expect(p.floor).toEqual({ below: 'value', level: expect.closeTo(floor, 12) });
    expect(p.changeDb!).toBeCloseTo(20 * Math.log10(floor / median3(nights.slice(0, 3).map((n) => n.band_20_200_rms))), 4);
    expect(lines).toMatch(/below the measurable floor 3\.53\d*e-7 m\/s\^2 \(10⁻⁶ of the channel's RMS\), a fall of at least 86\.\d dB, score −\d+ against its baseline 0\.00707/);
  });

  it('velocity: the floor is the most a band of acceleration at the floor integrates to at its lower edge (v = a / 2πf, common practice), in mm/s', () => {
    const f = { name: 'velocity_10_1000_rms', unit: 'mm/s', level: 'amplitude' as const };
    expect(floorOf(f, 'm/s^2', 2)).toBeCloseTo((1e-6 * 2 * 1000) / (2 * Math.PI * 10), 15);
    expect(floorOf(f, 'g', 2)).toBeCloseTo((1e-6 * 2 * 9.80665 * 1000) / (2 * Math.PI * 10), 15);
    expect(floorOf(f, 'V', 2)).toBeNull();
    expect(floorOf({ name: 'crest_factor', unit: '1', level: 'amplitude' }, 'm/s^2', 2)).toBeNull();
    // Neither side below the floor: scored as ever.
    expect(againstFloor(0.5, 1e-6, 0.4, 1e-6)).toBeNull();
  });
});

describe('the same recording stored as float64 and as float32', () => {
  it('reads no change in any band, velocity or RMS: three nights of the float64 copy, then the float32 copy (soundfile)', async () => {
    const root = tempDir(), archive = join(root, 'archive'), out = join(root, 'out');
    mkdirSync(join(archive, 'rig'), { recursive: true });
    writeFileSync(join(archive, 'archive.yaml'), 'groups:\n  - { name: rig, match: "rig/*.wav", channels: [{ name: acc, quantity: acceleration, unit: m/s^2, scale: 1 }] }\n');
    writeFileSync(join(root, 'spec.yaml'), 'spectrum: { segment: 4096, overlap: 0.5, window: hann }\nbands: [[20, 200], [200, 1000]]\nvelocity_bands: [[10, 1000]]\ntrends: { features: [rms, "band_*_rms", "velocity_*_rms"] }\n');
    const copies = ['tone-float64.wav', 'tone-float64.wav', 'tone-float64.wav', 'tone-float32.wav'];
    copies.forEach((file, night) => {
      const to = join(archive, 'rig', `night-${night + 1}.wav`), at = new Date(Date.UTC(2026, 10, 1 + night, 2));
      copyFileSync(fixture('floor', file), to);
      utimesSync(to, at, at);
    });
    const r = quern('reduce', archive, '--out', out, '--spec', join(root, 'spec.yaml'), '--jobs', '1', '--quiet');
    expect(r.code, r.stdout + r.stderr).toBe(0);
    const db = await (await DuckDBInstance.create()).connect();
    const rows = (await db.runAndReadAll(`select feature, value, change_db, score, verdict, floor from '${out}/trends.parquet' where recording = 'rig/night-4.wav' order by feature`)).getRowObjectsJS() as { feature: string; value: number; change_db: number | null; score: number | null; verdict: string | null; floor: number | null }[];
    expect(rows.map((x) => x.feature)).toEqual(['band_200_1000_rms', 'band_20_200_rms', 'rms', 'velocity_10_1000_rms']);
    expect(rows.map((x) => x.verdict)).toEqual(['steady', 'steady', 'steady', 'steady']);
    const rms = ref.files['tone-float32.wav'].rms;
    for (const x of rows.filter((y) => y.feature.startsWith('band_'))) {
      expect(x.value).toBeLessThan(FLOOR_RATIO * rms);
      expect([x.change_db, x.score, x.floor]).toEqual([null, null, expect.closeTo(FLOOR_RATIO * rms, 12)]);
    }
    // The channel's RMS compares as ever: float32 storage moves it by 2e-9 of itself (numpy, floor-vectors.json).
    const whole = rows.find((x) => x.feature === 'rms')!;
    expect(whole.floor).toBeNull();
    expect(whole.value).toBeCloseTo(rms, 9);
    expect(Math.abs(whole.change_db!)).toBeLessThan(1e-6);
  }, 120_000);
});

describe('the report\'s shaded band of values that read steady, for a baseline below its floor', () => {
  // The verdicts come from the real path on numpy/scipy-made nights (floor-vectors.json); the picture must agree with them:
  // a point inside the band reads steady, one outside changed.
  const nearFloor = (): Night[] => {
    const quiet = ref.histories.rounding.slice(0, 3), floor = FLOOR_RATIO * median3(quiet.map((n) => n.rms));
    // 1.5 × the floor is +3.5 dB over it (steady under the 6 dB threshold), 2.5 × is +8 dB (changed), 20·log10 (common practice).
    return [...quiet, { rms: quiet[0].rms, band_20_200_rms: 1.5 * floor }, { rms: quiet[0].rms, band_20_200_rms: 2.5 * floor }];
  };

  for (const [name, nights] of [['content appearing', () => ref.histories.appears], ['values just above the floor', nearFloor]] as const) {
    it(`${name}: every steady point lies in the band, every changed one above it; the band is drawn from the floor, not the rounding-level median`, async () => {
      const { points, picture } = await scored(nights());
      const floor = FLOOR_RATIO * median3(nights().slice(0, 3).map((n) => n.rms));
      expect(picture.floor).toBeCloseTo(floor, 12);
      expect(picture.band![1]).toBeCloseTo(floor * 10 ** (6 / 20), 12);
      expect(picture.median!).toBeLessThan(floor); // the rounding's median, which the band no longer rests on
      const verdicts = points.map((p) => p.verdict);
      expect(verdicts).toContain('changed');
      expect(verdicts.filter((v) => v === 'steady').length).toBeGreaterThanOrEqual(4);
      for (const p of points) {
        const inside = p.value >= picture.band![0] && p.value <= picture.band![1];
        expect(inside, `${p.value} reads ${p.verdict}`).toBe(p.verdict === 'steady');
      }

      // The same on the picture the report renders (Vega's SVG): the shaded rectangle spans the steady points and not the changed.
      const drawn = await svg(trendSpec(picture));
      const rect = /aria-roledescription="rect mark" d="M[-\d.]+,([-\d.]+)h[-\d.]+v([-\d.]+)h/.exec(drawn)!;
      const top = Number(rect[1]), bottom = top + Number(rect[2]);
      const ys = [...drawn.matchAll(/aria-label="[^"]*verdict: (\w+)[^"]*" role="graphics-symbol" aria-roledescription="point" transform="translate\([-\d.]+,([-\d.]+)\)/g)].map((m) => ({ verdict: m[1], y: Number(m[2]) }));
      expect(ys.length).toBe(points.length);
      for (const p of ys) expect(p.y >= top - 0.5 && p.y <= bottom + 0.5, `${p.verdict} at y ${p.y}, band ${top}–${bottom}`).toBe(p.verdict === 'steady');
      expect(drawn).toMatch(/baseline below its floor 3\.53\d*e-7: steady up to 7\.0\d*e-7/);
    });
  }

  it('a baseline above its floor keeps its band around the median (±6 dB and ±6 scores), no floor named', async () => {
    const { points, picture } = await scored(ref.histories.real);
    const m = median3(ref.histories.real.slice(0, 3).map((n) => n.band_20_200_rms));
    expect(picture.floor).toBeNull();
    expect(picture.median).toBeCloseTo(m, 15);
    expect(picture.band![1]).toBeLessThanOrEqual(m * 10 ** (6 / 20) * (1 + 1e-12));
    for (const p of points) expect(p.value >= picture.band![0] && p.value <= picture.band![1]).toBe(p.verdict === 'steady');
  });
});
