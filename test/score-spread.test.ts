// The score's spread: the README's score rule, score = (value − median) / max(1.4826 × MAD, spread_floor × |median|),
// with the spread never below rounding (1e-9 × |median|, or 1e-12 where the median is 0), so that equal values read steady
// and real differences are scored, whatever the feature.
import { describe, expect, it } from 'vitest';
import type { ReductionSpec } from '../spec/reduction.js';
import { toolVersion } from '../pipeline/declare/package-files.js';
import { groupKeys, type CacheEntry } from '../pipeline/plan/cache.js';
import { scoreHistory, type ScoredPoint } from '../pipeline/trends/changes.js';
import { readHistory } from '../pipeline/trends/history.js';
import { trendOptions } from '../pipeline/trends/options.js';
import { robustScore, spreadOf } from '../pipeline/trends/score.js';

const VERSION = toolVersion;

/** One night's stored statistics of one accelerometer channel. */
function entry(spec: ReductionSpec, night: number, columns: Record<string, number>): CacheEntry {
  const out = (c: Record<string, number>) => ({ columns: [c], flags: [[]], evidence: [null], tables: {}, notes: [] });
  const start = new Date(Date.UTC(2026, 4, 1 + night, 2)).toISOString();
  return {
    recording: `nightly/night-${String(night + 1).padStart(2, '0')}.wav`, group: 'nightly', status: 'reduced', seconds: 0,
    frames: 1, sampleRate: 1, startTime: start, channels: 1, notes: {}, storedAt: 0,
    base: { frames: 1, sampleRate: 1, notes: [], channels: [{ name: 'acc', quantity: 'acceleration', unit: 'm/s^2' }], header: { format: 'wav', encoding: 'pcm16', bits: 16, start_time: start } },
    groups: { statistics: out(columns), quality: out({}) },
    version: VERSION, identity: { size: 1, mtimeMs: 0, hash: null }, readAtMs: 0, declKey: '', groupKeys: groupKeys(spec, VERSION),
  };
}

/** The nights of one feature scored against the first three, under the spread floor given. */
async function scored(feature: string, values: number[], spreadFloor?: number): Promise<ScoredPoint[]> {
  const spec: ReductionSpec = { statistics: {}, trends: { features: [feature], ...(spreadFloor != null ? { spread_floor: spreadFloor } : {}) } };
  const o = trendOptions(spec)!;
  const entries = values.map((v, n) => entry(spec, n, { [feature]: v }));
  async function* stored() { yield* entries; }
  const [f] = scoreHistory(await readHistory('(not read)', spec, o, new Set(entries.map((e) => e.recording)), stored()), o);
  return values.map((_, i) => f.at(i)!);
}
const db = (d: number) => 10 ** (d / 20);

describe('a baseline of equal values', () => {
  it('spread_floor 0: rms equal reads steady, +0.5, +3 and +5.9 dB are scored and read changed (a spread of 0 asked for)', async () => {
    const p = await scored('rms', [0.03, 0.03, 0.03, 0.03, 0.03 * db(0.5), 0.03 * db(3), 0.03 * db(5.9)], 0);
    expect(p.map((x) => x.verdict)).toEqual(['steady', 'steady', 'steady', 'steady', 'changed', 'changed', 'changed']);
    // The score's denominator is rounding's: 1e-9 × the median.
    expect(p[5].score).toBeCloseTo((0.03 * db(3) - 0.03) / (1e-9 * 0.03), 0);
    expect(p.every((x) => x.score != null)).toBe(true);
  });

  it('spread_floor 0: kurtosis differing by rounding (1e-12) reads steady, a real difference is changed', async () => {
    const k = 1.5;
    const p = await scored('kurtosis', [k, k, k, k + 1e-12, k - 1e-12, k + 0.01], 0);
    expect(p.map((x) => x.verdict)).toEqual(['steady', 'steady', 'steady', 'steady', 'steady', 'changed']);
    expect(Math.abs(p[3].score!)).toBeLessThan(1e-2);
  });

  it('default floor: a count whose baseline median is 0 reads steady at 0 and changed at 1', async () => {
    const p = await scored('n_nonfinite', [0, 0, 0, 0, 1, 0]);
    expect(p.map((x) => x.verdict)).toEqual(['steady', 'steady', 'steady', 'steady', 'changed', 'steady']);
    expect(p[4].score).toBe(1e12);
  });

  it('the spread is never zero, and the floors apply as the README says', () => {
    expect(spreadOf(0, 0, 0)).toBe(1e-12);
    expect(spreadOf(2, 0, 0)).toBe(2e-9);
    expect(spreadOf(2, 0, 0.1)).toBeCloseTo(0.2, 15);
    expect(spreadOf(2, 1, 0.1)).toBeCloseTo(1.4826, 15);
    expect(spreadOf(0, 0.5, 0)).toBeCloseTo(0.7413, 15);
    expect(robustScore(2, 2, 0, 0)).toBe(0);
  });
});

describe('the default thresholds on a steady baseline (README, Why these defaults)', () => {
  it('a level reads changed from about +4 dB up (the score against the 10 % floor) and from −6 dB down (change_db, before the score)', async () => {
    const base = [1, 1.001, 0.999];
    // Each change is followed by the baseline's level, so no verdict is held by the deadband.
    const p = await scored('rms', [...base, db(3.9), db(-5.9), db(4.2), 1, db(-6.1)]);
    expect(p.slice(3).map((x) => x.verdict)).toEqual(['steady', 'steady', 'changed', 'steady', 'changed']);
    // Down at −6.1 dB the score is still inside ±6: the change is change_db's.
    expect(p[7].changeDb).toBeCloseTo(-6.1, 9);
    expect(Math.abs(p[7].score!)).toBeLessThan(6);
    // Up at +4.2 dB change_db is inside ±6: the change is the score's, (1.622 − 1) / 0.1.
    expect(p[5].score).toBeCloseTo((db(4.2) - 1) / 0.1, 9);
  });
});
