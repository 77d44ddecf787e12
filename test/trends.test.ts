// Trends against a baseline: the robust statistics against numpy and scipy, and planted histories read through the real
// history path (stored entries in any order → series → baseline → score → verdict).
import { describe, expect, it } from 'vitest';
import type { Severity } from '../stages/quality/flag.js';
import type { ReductionSpec, TrendsSpec } from '../spec/reduction.js';
import { toolVersion } from '../pipeline/declare/package-files.js';
import { groupKeys, type CacheEntry } from '../pipeline/plan/cache.js';
import { changesReport, scoreHistory, type ScoredPoint } from '../pipeline/trends/changes.js';
import { changesSummary } from '../pipeline/trends/summary.js';
import { readHistory } from '../pipeline/trends/history.js';
import { levelKind, trendOptions, unknownLimits } from '../pipeline/trends/options.js';
import { MAD_TO_SIGMA, medianAndMad } from '../pipeline/trends/robust.js';
import { changeDb, robustScore } from '../pipeline/trends/score.js';
import { fixture, readJson } from './helpers.js';

const VERSION = toolVersion;

/** A stored result of one recording with one accelerometer channel: its RMS, and a data-quality verdict. */
function entry(spec: ReductionSpec, night: number, rms: number, quality: Severity = 'ok', channel = 'acc_de', flagName = 'saturation'): CacheEntry {
  const flag = { name: flagName, severity: quality, value: null, threshold: '', evidence: {}, message: '' };
  const out = (columns: Record<string, number>) => ({ columns: [columns], flags: [[]], evidence: [null], tables: {}, notes: [] });
  const start = new Date(Date.UTC(2026, 0, 1 + night, 2)).toISOString();
  return {
    recording: `nightly/night-${String(night + 1).padStart(3, '0')}.wav`, group: 'nightly', status: 'reduced', seconds: 0,
    frames: 1, sampleRate: 1, startTime: start, channels: 1, notes: {}, storedAt: 0,
    base: {
      frames: 1, sampleRate: 1, notes: [], channels: [{ name: channel, quantity: 'acceleration', unit: 'm/s^2' }],
      header: { format: 'wav', encoding: 'pcm16', bits: 16, start_time: start },
    },
    groups: { statistics: out({ rms }), quality: { ...out({}), flags: [[flag]] } },
    version: VERSION, identity: { size: 1, mtimeMs: 0, hash: null }, readAtMs: 0, declKey: '', groupKeys: groupKeys(spec, VERSION),
  };
}

/** Each night's scored RMS, the history read from entries handed over in a scrambled order (as a store may list them). */
async function scoredNights(levels: number[], trends: TrendsSpec = {}, quality: (night: number) => Severity = () => 'ok', flagName = 'saturation'): Promise<ScoredPoint[]> {
  const spec: ReductionSpec = { statistics: {}, trends: { features: ['rms'], ...trends } };
  const o = trendOptions(spec)!;
  const entries = levels.map((v, night) => entry(spec, night, v, quality(night), 'acc_de', flagName));
  const scrambled = entries.map((e, i) => ({ e, k: (i * 7919) % entries.length })).sort((a, b) => a.k - b.k).map((x) => x.e);
  async function* stored() { yield* scrambled; }
  const history = await readHistory('(not read)', spec, o, new Set(entries.map((e) => e.recording)), stored());
  const [rms] = scoreHistory(history, o);
  return levels.map((_, i) => rms.at(i)!);
}

describe('figures of another version of quern', () => {
  it('do not compare: a baseline stored by another version holds its places as stale, and its values are left out', async () => {
    const spec: ReductionSpec = { statistics: {}, trends: { features: ['rms'] } };
    const o = trendOptions(spec)!;
    const older = '0.0.1';
    const entries = [1, 1, 1, 2, 2].map((v, night) => {
      const e = entry(spec, night, v);
      return night < 3 ? { ...e, version: older, groupKeys: groupKeys(spec, older) } : e;
    });
    async function* stored() { yield* entries; }
    const history = await readHistory('(not read)', spec, o, new Set(entries.map((e) => e.recording)), stored());
    const [s] = history.series;
    expect([...s.stale[0]]).toEqual([1, 1, 1, 0, 0]);
    expect([...s.values[0]].map((v) => Number.isNaN(v))).toEqual([true, true, true, false, false]);
    const report = changesReport(history, scoreHistory(history, o), o);
    expect(report.stale_baselines).toBe(1);
    expect(changesSummary(report).join('\n')).toMatch(/another version of quern; run once without --since/);
  });
});

/** Seeded Gaussian noise (mulberry32, Box–Muller). */
function gaussian(seed: number) {
  let a = seed >>> 0;
  const u = () => { a = (a + 0x6d2b79f5) >>> 0; let t = Math.imul(a ^ (a >>> 15), a | 1); t ^= t + Math.imul(t ^ (t >>> 7), t | 61); return ((t ^ (t >>> 14)) >>> 0) / 4294967296; };
  return () => Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u());
}
const fromDb = (db: number) => 10 ** (db / 20);
const verdicts = (points: ScoredPoint[]) => points.map((p) => p.verdict);

describe('robust statistics of the baseline', () => {
  it('median and median absolute deviation match numpy.median and scipy.stats.median_abs_deviation on random data', () => {
    const ref = readJson(fixture('trend-vectors.json'));
    expect(ref.made_by).toMatch(/numpy .*scipy/);
    for (const c of ref.robust) {
      const { median, mad } = medianAndMad(c.values);
      expect(median).toBeCloseTo(c.median, 12);
      expect(mad).toBeCloseTo(c.mad, 12);
    }
  });

  it('1.4826 × MAD estimates σ for Gaussian data: 1/Φ⁻¹(3/4) (Rousseeuw and Croux 1993)', () => {
    expect(MAD_TO_SIGMA).toBeCloseTo(1 / 0.6744897501960817, 4);
    const g = gaussian(5);
    const x = Array.from({ length: 200_001 }, () => 3 + 0.7 * g());
    expect(MAD_TO_SIGMA * medianAndMad(x).mad).toBeCloseTo(0.7, 2);
  });

  it("puts a mean square's change as 10·log10 of the power ratio, a level in dB re 20 µPa as the difference, and a shaft speed in no decibels (common practice)", () => {
    // A doubled mean square is +3.01 dB; the same change as an amplitude would read +6.02 dB.
    expect(levelKind('band_10_100_ms', '[unit]^2')).toBe('power');
    expect(changeDb(2, 1, 'power')).toBeCloseTo(3.0103, 4);
    // LAeq from 80 to 86 dB is +6 dB, not 20·log10(86/80) = +0.63 dB.
    expect(levelKind('laeq', 'dB re 20 µPa')).toBe('decibel');
    expect(changeDb(86, 80, levelKind('laeq', 'dB re 20 µPa'))).toBeCloseTo(6, 12);
    expect(levelKind('speed_mean_rpm', 'rpm')).toBeNull();
    expect(levelKind('rms', '[unit]')).toBe('amplitude');
  });

  it('scores a signed figure (mean, min, max) by its robust score alone, the same either side of zero', () => {
    // A zero-mean channel's mean may cross zero: a level in dB or a floor would read a fall to −x steady and a rise to +x changed.
    for (const name of ['mean', 'min', 'max']) expect(levelKind(name, '[unit]')).toBeNull();
    expect(changeDb(-0.5, 0.001, levelKind('mean', '[unit]'))).toBeNull();
    expect(robustScore(0.5, 0, 0.01, 0.1)).toBeCloseTo(-robustScore(-0.5, 0, 0.01, 0.1), 12);
  });

  it('puts a level change in decibels as 20·log10 of the amplitude ratio (a doubled amplitude is +6.02 dB), and floors the spread', () => {
    expect(changeDb(2, 1, 'amplitude')).toBeCloseTo(6.0206, 4);
    expect(changeDb(3.2, 1, null)).toBeNull();
    expect(changeDb(-1, 1, 'amplitude')).toBeNull();
    // A baseline with no spread at all scores against 10 % of its median.
    expect(robustScore(1.3, 1, 0, 0.1)).toBeCloseTo(3, 12);
    expect(robustScore(1.3, 1, 0.5, 0.1)).toBeCloseTo(0.3 / (1.4826 * 0.5), 12);
  });
});

describe('the trends section', () => {
  it('watches the default features the spec computes, and names what cannot work', () => {
    const o = trendOptions({ statistics: {}, velocity_bands: [[10, 1000]], trends: {} })!;
    expect(o.features.map((f) => `${f.name}:${f.level}`)).toEqual(['rms:amplitude', 'peak:amplitude', 'crest_factor:amplitude', 'kurtosis:null', 'velocity_10_1000_rms:amplitude']);
    expect(trendOptions({ statistics: {} })).toBeNull();
    // A limit on a column the spec does not compute is named, with the nearest columns (file and line come from check-spec.ts).
    const unknown = unknownLimits({ statistics: {}, trends: { limits: { env_rms: { alarm: 1 }, rms: { warn: 1 } } } });
    expect(unknown.map((u) => [u.name, u.nearest[0]])).toEqual([['env_rms', 'rms']]);
    expect(() => trendOptions({ statistics: {}, trends: { baseline: { from: 'last week', until: '2026-01-01' } } })).toThrow(/trends\.baseline\.from: "last week" is not a date/);
  });
});

describe('verdicts on planted histories, at the default thresholds (±6 dB or |score| > 6 against the first 3 recordings)', () => {
  it('a stationary history whose level varies only by Gaussian noise of 0.5 dB raises no change in 30 nights (50 histories)', async () => {
    for (let seed = 1; seed <= 50; seed++) {
      const g = gaussian(seed);
      const points = await scoredNights(Array.from({ length: 30 }, () => 2.5 * fromDb(0.5 * g())));
      expect(verdicts(points).filter((v) => v !== 'steady'), `history ${seed}`).toEqual([]);
    }
  });

  it('a +8 dB step at night 7 is changed from night 7 on, and steady before (with 0.5 dB of noise, 20 histories)', async () => {
    for (let seed = 1; seed <= 20; seed++) {
      const g = gaussian(100 + seed);
      const points = await scoredNights(Array.from({ length: 20 }, (_, i) => 2.5 * fromDb(0.5 * g() + (i >= 6 ? 8 : 0))));
      expect(verdicts(points), `history ${seed}`).toEqual(Array.from({ length: 20 }, (_, i) => (i >= 6 ? 'changed' : 'steady')));
    }
  });

  it('a drift that doubles the RMS over 10 nights is changed by the night it passes +6 dB, and stays changed', async () => {
    const points = await scoredNights(Array.from({ length: 25 }, (_, i) => 1.3 * 2 ** (i / 10)));
    const passes = points.findIndex((p) => p.changeDb! > 6);
    const first = points.findIndex((p) => p.verdict === 'changed');
    expect(passes).toBe(11); // the baseline median is night 2's level, 2^(1/10): +6 dB is passed at 2^(11/10)
    expect(first).toBeGreaterThanOrEqual(3);
    expect(first).toBeLessThanOrEqual(passes);
    expect(verdicts(points.slice(first)).every((v) => v === 'changed')).toBe(true);
  });

  it('a declared limit crossing is alarm (a warn limit at least changed), with or without a complete baseline', async () => {
    const levels = [2.0, 2.1, 2.0, 2.05, 2.6, 3.4, 2.0];
    const points = await scoredNights(levels, { limits: { rms: { warn: 2.5, alarm: 3.2 } } });
    expect(verdicts(points)).toEqual(['steady', 'steady', 'steady', 'steady', 'changed', 'alarm', 'steady']);
    expect(points.map((p) => p.limit)).toEqual([null, null, null, null, 'warn', 'alarm', null]);
    // Before a baseline exists only the limits speak.
    const early = await scoredNights([3.3, 2.0], { limits: { rms: { alarm: 3.2 } } });
    expect(verdicts(early)).toEqual(['alarm', null]);
  });

  // Clipping cuts each sample's magnitude to the range, so a clipped recording's RMS is at most the true one (common practice:
  // clipped data read low): at or above a limit it is above it in truth. Any other failing check leaves the figure unjudged.
  it('a night that fails on saturation alone still sounds a limit its RMS reaches; one failing on another check does not', async () => {
    const levels = [2.0, 2.1, 2.0, 4.1, 2.0];
    const clipped = await scoredNights(levels, { limits: { rms: { warn: 2.5, alarm: 3.2 } } }, (night) => (night === 3 ? 'fail' : 'ok'));
    expect(verdicts(clipped)).toEqual(['steady', 'steady', 'steady', 'alarm', 'steady']);
    expect(clipped[3].limit).toBe('alarm');
    // Below every limit a clipped night has no verdict: its figure says nothing of the input beyond the range.
    expect(verdicts(await scoredNights([2.0, 2.1, 2.0, 2.2, 2.0], { limits: { rms: { alarm: 3.2 } } }, (night) => (night === 3 ? 'fail' : 'ok')))[3]).toBeNull();
    const dead = await scoredNights(levels, { limits: { rms: { alarm: 3.2 } } }, (night) => (night === 3 ? 'fail' : 'ok'), 'spikes');
    expect(verdicts(dead)[3]).toBeNull();
  });

  // One rms limit across accelerometers, microphones and pressure would mix units: as a list, each entry names its channels.
  it('limits given as a list apply per channel: the first entry naming the channel, none where no entry names it', async () => {
    const spec: ReductionSpec = { statistics: {}, trends: { features: ['rms'], limits: { rms: [{ channel: 'acc_*', warn: 5.5, alarm: 5.8 }, { channel: 'mic', group: 'night*', alarm: 0.5 }, { channel: 'mic', warn: 0.1 }] } } };
    const o = trendOptions(spec)!;
    const de = [2, 2, 2, 2, 2, 2, 6].map((v, n) => entry(spec, n, v, 'ok', 'acc_de'));
    const nde = [2, 2, 2, 2, 2, 2, 5.6].map((v, n) => entry(spec, n, v, 'ok', 'acc_nde'));
    const mic = [1, 1, 1, 1, 1, 1, 1].map((v, n) => entry(spec, n, v, 'ok', 'mic'));
    const pressure = [100, 100, 100, 100, 100, 100, 100].map((v, n) => entry(spec, n, v, 'ok', 'pressure'));
    const all = [...de, ...nde, ...mic, ...pressure];
    async function* stored() { yield* all; }
    const history = await readHistory('(not read)', spec, o, new Set(all.map((e) => e.recording)), stored());
    const report = changesReport(history, scoreHistory(history, o), o);
    expect(report.items.map((c) => `${c.channel} ${c.verdict} ${c.limit} ${JSON.stringify(c.limits)}`)).toEqual([
      'acc_de alarm alarm {"warn":5.5,"alarm":5.8}',
      'mic alarm alarm {"alarm":0.5}', // the first entry naming mic in group nightly; the second never applies here
      'acc_nde changed warn {"warn":5.5,"alarm":5.8}',
    ]);
    // pressure: no entry names it, so 100 (in its own unit) is no limit crossing.
    expect(report.totals.steady).toBe(7 + 6 + 6);
    expect(report.unmatched_limits).toEqual([]);
    // An entry whose channel no stored history has is a limit that can never sound: said on the terminal.
    const typo: ReductionSpec = { statistics: {}, trends: { features: ['rms'], limits: { rms: [{ channel: 'acc_*', alarm: 5.8 }, { channel: 'presure', warn: 8 }] } } };
    const o2 = trendOptions(typo)!;
    const told = changesReport(history, scoreHistory(history, o2), o2);
    expect(told.unmatched_limits).toEqual(['rms[1] (channel presure)']);
    expect(changesSummary(told)).toContain('  trends.limits rms[1] (channel presure) names no stored channel, so it can never be reached: check its channel and group against features.parquet');
    expect(changesReport(history, scoreHistory(history, o), { ...o, limits: {} }).unmatched_limits).toBeUndefined();
  });

  // An alarm deadband (common practice in alarm management): a verdict clears only once the value is back inside its threshold
  // by the deadband, 20 % of it by default (ours). With a baseline of 2.0 the +6 dB threshold is 3.99 and 4.8 dB is 3.47.
  it('a change hovering at its threshold stays changed until it falls back by the deadband; deadband 0 lets it come and go', async () => {
    const dbs = [0, 0.3, -0.3, 0, 6.5, 5.7, 6.2, 5.0, 4.9, 3.0, 5.5];
    const levels = dbs.map((db) => 2.0 * fromDb(db));
    const held = await scoredNights(levels, { score: 100 });
    expect(verdicts(held)).toEqual(['steady', 'steady', 'steady', 'steady', 'changed', 'changed', 'changed', 'changed', 'changed', 'steady', 'steady']);
    expect(held.map((p) => p.held === true)).toEqual([false, false, false, false, false, true, false, true, true, false, false]);
    const bare = await scoredNights(levels, { score: 100, deadband: 0 });
    expect(verdicts(bare)).toEqual(['steady', 'steady', 'steady', 'steady', 'changed', 'steady', 'changed', 'steady', 'steady', 'steady', 'steady']);
    // An alarm limit holds within its deadband too (alarm 3.2: clears at or below 2.56), then steps down to the warn limit's
    // (warn 2.5: clears at or below 2.0).
    const limited = await scoredNights([2.0, 2.1, 2.0, 3.3, 3.0, 2.6, 2.5, 2.2, 1.95], { limits: { rms: { warn: 2.5, alarm: 3.2 } } });
    expect(verdicts(limited)).toEqual(['steady', 'steady', 'steady', 'alarm', 'alarm', 'alarm', 'changed', 'changed', 'steady']);
  });

  it('a recording whose channel fails the data-quality checks has no verdict and takes no part in the baseline', async () => {
    const points = await scoredNights([40, 2.0, 2.1, 2.0, 2.05], {}, (night) => (night === 0 ? 'fail' : 'ok'));
    expect(verdicts(points)).toEqual([null, 'steady', 'steady', 'steady', 'steady']);
    expect(points[4].baseline).toBe(2.0);
  });

  it('a capture left out of the baseline by name or glob takes no place in it, and keeps its own verdict', async () => {
    const levels = [6.0, 2.0, 2.1, 2.0, 2.05, 2.0];
    const kept = await scoredNights(levels);
    expect(kept[4].baseline).toBe(2.1); // 6.0, 2.0 and 2.1: the mis-mounted first night pulls the median up
    for (const exclude of [['nightly/night-001.wav'], ['nightly/night-00[1]*']]) {
      const points = await scoredNights(levels, { baseline: { first: 3, exclude } });
      expect(points[4].baseline).toBe(2.0);
      expect(verdicts(points)).toEqual(['changed', 'steady', 'steady', 'steady', 'steady', 'steady']);
    }
    const period = await scoredNights(levels, { baseline: { from: '2026-01-01', until: '2026-01-04', exclude: ['**/night-001.wav'] } });
    expect(period[4].baseline).toBe(2.05);
  });

  it('says how many stored recordings the exclusion leaves out, and when it matches none', async () => {
    const spec = (exclude: string[]): ReductionSpec => ({ statistics: {}, trends: { features: ['rms'], baseline: { first: 3, exclude } } });
    const linesOf = async (exclude: string[]) => {
      const o = trendOptions(spec(exclude))!;
      const entries = [2.0, 2.1, 2.0, 2.05].map((v, night) => entry(spec(exclude), night, v));
      async function* stored() { yield* entries; }
      const history = await readHistory('(not read)', spec(exclude), o, new Set(entries.map((e) => e.recording)), stored());
      const report = changesReport(history, scoreHistory(history, o), o);
      return { report, lines: changesSummary(report) };
    };
    const two = await linesOf(['nightly/night-00[12].wav']);
    expect(two.report.excluded_recordings).toBe(2);
    expect(two.report.baseline).toMatch(/, leaving out nightly\/night-00\[12\]\.wav$/);
    expect(two.lines).toContain('  2 stored recordings are left out of the baselines (trends.baseline.exclude)');
    const none = await linesOf(['nightly/night-1.wav']);
    expect(none.report.excluded_recordings).toBe(0);
    expect(none.lines.join('\n')).toMatch(/trends\.baseline\.exclude matches no stored recording/);
    expect((await linesOf([])).report.excluded_recordings).toBeUndefined();
  });

  // A sensor replaced on 7 January reads 9.5 dB higher (another sensitivity): the machine did not change.
  it('a baseline restarted from a date (a sensor replaced): earlier nights keep their verdicts, later ones are held against the new first N', async () => {
    const levels = [2.0, 2.1, 2.0, 2.05, 2.0, 2.1, 6.0, 6.2, 6.0, 6.1, 6.0, 12.0];
    expect(verdicts(await scoredNights(levels)).slice(6)).toEqual(Array(6).fill('changed'));
    for (const restart of [{ channel: 'acc_de', from: '2026-01-07' }, { channel: 'acc_*', group: 'nightly', from: '2026-01-07T00:00Z' }]) {
      const points = await scoredNights(levels, { baseline: { first: 3, restart: [restart] } });
      expect(verdicts(points)).toEqual([...Array(11).fill('steady'), 'changed']);
      expect(points[4].baseline).toBe(2.0);
      expect(points[9].baseline).toBe(6.0); // the median of the new sensor's first three nights
    }
    // Another group's channel of the same name keeps its baseline; a restart may take its own N, and applies to a period baseline too.
    expect(verdicts(await scoredNights(levels, { baseline: { first: 3, restart: [{ channel: 'acc_de', group: 'bench', from: '2026-01-07' }] } })).slice(6)).toEqual(Array(6).fill('changed'));
    const two = await scoredNights(levels, { baseline: { from: '2026-01-01', until: '2026-01-04', restart: [{ channel: 'acc_de', from: '2026-01-07', first: 2 }] } });
    expect(verdicts(two)).toEqual([...Array(11).fill('steady'), 'changed']);
    expect(two[8].baseline).toBeCloseTo(6.1, 12);
  });

  it('a restarted baseline holds nothing over from the one before: no deadband carried across the restart', async () => {
    // Changed on nights 5 and 6 (+8 dB); the new sensor's first night, right after them, sits inside the score threshold of
    // its new baseline (median 4.0, spread floor 0.4) but not by the deadband (score (6.2 − 4) / 0.4 = 5.5, between 4.8 and 6).
    const levels = [2.0, 2.0, 2.0, 2.0, 5.0, 5.0, 6.2, 4.0, 4.0, 4.0];
    const points = await scoredNights(levels, { baseline: { first: 3, restart: [{ channel: 'acc_de', from: '2026-01-07' }] } });
    expect(verdicts(points)).toEqual(['steady', 'steady', 'steady', 'steady', 'changed', 'changed', 'steady', 'steady', 'steady', 'steady']);
    expect(points[6].held).toBeUndefined();
    expect(points[6].score).toBeCloseTo(5.5, 12);
  });

  it('says which channel histories each restart forms again, and when one matches none', async () => {
    const spec = (restart: { channel: string; group?: string; from: string }[]): ReductionSpec => ({ statistics: {}, trends: { features: ['rms'], baseline: { first: 3, restart } } });
    const linesOf = async (restart: { channel: string; group?: string; from: string }[]) => {
      const o = trendOptions(spec(restart))!;
      const entries = [2.0, 2.1, 2.0, 2.05, 6.0].flatMap((v, night) => [entry(spec(restart), night, v, 'ok', 'acc_de'), { ...entry(spec(restart), night, v, 'ok', 'acc_nde'), recording: `nightly/nde-${night}.wav` }]);
      async function* stored() { yield* entries; }
      const history = await readHistory('(not read)', spec(restart), o, new Set(entries.map((e) => e.recording)), stored());
      const report = changesReport(history, scoreHistory(history, o), o);
      return { report, lines: changesSummary(report) };
    };
    const both = await linesOf([{ channel: 'acc_*', from: '2026-01-05' }, { channel: 'mic', group: 'nightly', from: '2026-01-05' }]);
    expect(both.report.baseline_restarts).toEqual([{ restart: 'acc_* from 2026-01-05', histories: 2 }, { restart: 'nightly mic from 2026-01-05', histories: 0 }]);
    expect(both.report.baseline).toMatch(/; formed again for acc_\* from 2026-01-05 \(its first 3\), for nightly mic from 2026-01-05 \(its first 3\)$/);
    expect(both.lines).toContain('  baseline formed again for acc_* from 2026-01-05: 2 stored channel histories (trends.baseline.restart)');
    expect(both.lines).toContain('  trends.baseline.restart nightly mic from 2026-01-05 matches no stored channel: check its group and channel against features.parquet');
    // The 6.0 of the last night is the new sensor's first: no change listed (without the restart, both channels would be).
    expect(both.report.items).toEqual([]);
    expect((await linesOf([])).report.baseline_restarts).toBeUndefined();
    // Only ISO 8601 dates: free text such as "7 January" would otherwise be read as a day of 2001.
    expect(() => trendOptions(spec([{ channel: 'acc_de', from: '7 January' }]))).toThrow(/trends\.baseline\.restart\[0\]\.from: "7 January" is not a date/);
    expect(() => trendOptions(spec([{ channel: 'acc_de', from: '2026-02-30' }]))).toThrow(/"2026-02-30" is not a date/); // not 2 March
    expect(() => trendOptions(spec([{ channel: 'acc_de', from: '2026-11-20T02:00' }]))).not.toThrow(); // a time without a zone: UTC
  });

  it('a declared period is the baseline: the recordings starting in it, whatever their number', async () => {
    const points = await scoredNights([5, 5, 2.0, 2.1, 2.0, 2.1, 5], { baseline: { from: '2026-01-03', until: '2026-01-07' } });
    expect(points[0].baseline).toBeCloseTo(2.05, 12);
    expect(verdicts(points)).toEqual(['changed', 'changed', 'steady', 'steady', 'steady', 'steady', 'changed']);
  });

  it('lists what changed at the latest night, strongest first, with the night the change began', async () => {
    const spec: ReductionSpec = { statistics: {}, trends: { features: ['rms'] } };
    const o = trendOptions(spec)!;
    const de = [2, 2, 2, 2, 4, 5, 6].map((v, n) => entry(spec, n, v, 'ok', 'acc_de'));
    const nde = [2, 2, 2, 2, 2, 2, 3.5].map((v, n) => entry(spec, n, v, 'ok', 'acc_nde'));
    const mic = [1, 1, 1, 1, 1, 1, 1].map((v, n) => entry(spec, n, v, 'ok', 'mic'));
    const all = [...de, ...nde, ...mic];
    async function* stored() { yield* all; }
    const history = await readHistory('(not read)', spec, o, new Set(all.map((e) => e.recording)), stored());
    const report = changesReport(history, scoreHistory(history, o), o);
    expect(report.items.map((c) => `${c.channel} ${c.feature} ${c.verdict}`)).toEqual(['acc_de rms changed', 'acc_nde rms changed']);
    expect(report.items[0]).toMatchObject({ value: 6, baseline: 2, since: { recording: 'nightly/night-005.wav' } });
    expect(report.items[0].change_db).toBeCloseTo(20 * Math.log10(3), 9);
    expect(report.totals).toEqual({ steady: 21 - 4, changed: 4, alarm: 0, unscored: 0 });
  });
});
