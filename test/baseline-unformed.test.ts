// A baseline that never forms is named with why: the README's Baseline rule (the first N usable recordings, or those starting
// in a declared period; a channel that fails the data-quality checks takes no part) applied to planted histories.
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { Ajv } from 'ajv';
import { describe, expect, it } from 'vitest';
import type { Severity } from '../stages/quality/flag.js';
import type { ReductionSpec, TrendsSpec } from '../spec/reduction.js';
import { toolVersion } from '../pipeline/declare/package-files.js';
import { groupKeys, type CacheEntry } from '../pipeline/plan/cache.js';
import { changesReport, scoreHistory } from '../pipeline/trends/changes.js';
import { changesSummary } from '../pipeline/trends/summary.js';
import { readHistory } from '../pipeline/trends/history.js';
import { trendOptions } from '../pipeline/trends/options.js';
import { repo } from './helpers.js';

const VERSION = toolVersion;

/** One night's stored result of one channel on 2026-03-(1+night): its RMS and a data-quality verdict. */
function entry(spec: ReductionSpec, night: number, rms: number, quality: Severity, channel: string): CacheEntry {
  const flag = { name: 'saturation', severity: quality, value: null, threshold: '', evidence: {}, message: '' };
  const out = (columns: Record<string, number>) => ({ columns: [columns], flags: [[]], evidence: [null], tables: {}, notes: [] });
  const start = new Date(Date.UTC(2026, 2, 1 + night, 2)).toISOString();
  return {
    recording: `nightly/${channel}-${String(night + 1).padStart(2, '0')}.wav`, group: 'nightly', status: 'reduced', seconds: 0,
    frames: 1, sampleRate: 1, startTime: start, channels: 1, notes: {}, storedAt: 0,
    base: { frames: 1, sampleRate: 1, notes: [], channels: [{ name: channel, quantity: 'acceleration', unit: 'm/s^2' }], header: { format: 'wav', encoding: 'pcm16', bits: 16, start_time: start } },
    groups: { statistics: out({ rms }), quality: { ...out({}), flags: [[flag]] } },
    version: VERSION, identity: { size: 1, mtimeMs: 0, hash: null }, readAtMs: 0, declKey: '', groupKeys: groupKeys(spec, VERSION),
  };
}

/** Ten nights of two channels: acc_ok always passes the checks, acc_bad fails them on the first three nights. */
async function report(trends: TrendsSpec) {
  const spec: ReductionSpec = { statistics: {}, trends: { features: ['rms'], ...trends } };
  const o = trendOptions(spec)!;
  const entries = Array.from({ length: 10 }, (_, n) => [entry(spec, n, 1, 'ok', 'acc_ok'), entry(spec, n, 1, n < 3 ? 'fail' : 'ok', 'acc_bad')]).flat();
  async function* stored() { yield* entries; }
  const history = await readHistory('(not read)', spec, o, new Set(entries.map((e) => e.recording)), stored());
  const r = changesReport(history, scoreHistory(history, o), o);
  return { r, lines: changesSummary(r) };
}

describe('a baseline that has not formed', () => {
  it('a period before any recording: every channel is named, and none of its nights has a verdict', async () => {
    const { r, lines } = await report({ baseline: { from: '2026-01-01', until: '2026-01-10' } });
    expect(r.totals).toMatchObject({ steady: 0, changed: 0, unscored: 20 });
    expect(r.unformed_baselines).toEqual(['acc_bad', 'acc_ok'].map((channel) => ({
      group: 'nightly', channel, channel_unit: 'm/s^2', features: ['rms'],
      why: 'no recording of the channel starts in its baseline period 2026-01-01 to 2026-01-10; give a period the channel was recorded in (trends.baseline)',
    })));
    expect(lines).toContain('  no baseline yet for nightly acc_ok (rms), so no change verdict: no recording of the channel starts in its baseline period 2026-01-01 to 2026-01-10; give a period the channel was recorded in (trends.baseline)');
  });

  it('a period holding only recordings that fail the checks: that channel alone is named, with how many fail', async () => {
    const { r, lines } = await report({ baseline: { from: '2026-03-01', until: '2026-03-04' } });
    expect(r.unformed_baselines).toEqual([{ group: 'nightly', channel: 'acc_bad', channel_unit: 'm/s^2', features: ['rms'], why: 'none of its 3 recordings in its baseline period 2026-03-01 to 2026-03-04 can serve (3 fail the data-quality checks); give a period with usable recordings (trends.baseline)' }]);
    // acc_ok's 10 nights are steady; acc_bad's 7 usable nights and 3 failing ones have no verdict.
    expect(r.totals).toMatchObject({ steady: 10, unscored: 10 });
    expect(lines.some((l) => l.includes('no baseline yet for nightly acc_bad (rms)'))).toBe(true);
  });

  it('first N: forms past failing recordings, so nothing is named once N usable ones exist; while forming, says how far', async () => {
    expect((await report({ baseline: { first: 3 } })).r.unformed_baselines).toBeUndefined();
    const { r } = await report({ baseline: { first: 9 } });
    expect(r.unformed_baselines).toEqual([{ group: 'nightly', channel: 'acc_bad', channel_unit: 'm/s^2', features: ['rms'], why: '7 of the 9 usable recordings it needs so far (3 fail the data-quality checks); it forms as more are stored' }]);
  });
});

/** `nights` nights of each channel given (all passing the checks, or failing on the nights listed), in group `group`. */
function nightsOf(spec: ReductionSpec, group: string, channels: { channel: string; nights: number; failing?: number[] }[]): CacheEntry[] {
  return channels.flatMap(({ channel, nights, failing = [] }) => Array.from({ length: nights }, (_, n) => {
    const e = entry(spec, n, 1, failing.includes(n) ? 'fail' : 'ok', channel);
    return { ...e, group, recording: `${group}/${e.recording}` };
  }));
}

async function reportOf(entries: CacheEntry[], spec: ReductionSpec) {
  const o = trendOptions(spec)!;
  async function* stored() { yield* entries; }
  const history = await readHistory('(not read)', spec, o, new Set(entries.map((e) => e.recording)), stored());
  const r = changesReport(history, scoreHistory(history, o), o);
  return { r, lines: changesSummary(r) };
}

describe('baselines that wait only for recordings to come (a new archive\'s first nights)', () => {
  const spec: ReductionSpec = { statistics: {}, trends: { features: ['rms'], baseline: { first: 3 } } };

  it('are told in one line, how many channel features, of which groups and for how many more recordings; quality.json keeps each', async () => {
    // Group rig: 7 channels with 2 nights each (1 more to come) and one with 1 night (2 more); group bench: 1 channel, 1 night.
    const rig = [...Array.from({ length: 7 }, (_, c) => ({ channel: `acc_${c + 1}`, nights: 2 })), { channel: 'mic', nights: 1 }];
    const { r, lines } = await reportOf([...nightsOf(spec, 'rig', rig), ...nightsOf(spec, 'bench', [{ channel: 'strain', nights: 1 }])], spec);
    // The detailed list is as before: one entry a channel, with its why.
    expect(r.unformed_baselines).toHaveLength(9);
    expect(r.unformed_baselines!.find((u) => u.channel === 'acc_1')).toEqual({ group: 'rig', channel: 'acc_1', channel_unit: 'm/s^2', features: ['rms'], why: '2 of the 3 usable recordings it needs so far; it forms as more are stored' });
    expect(r.forming_baselines).toEqual([
      { group: 'bench', channel_features: 1, first: 3, more_recordings: { fewest: 2, most: 2 }, unformed_entries: [r.unformed_baselines!.findIndex((u) => u.group === 'bench')] },
      { group: 'rig', channel_features: 8, first: 3, more_recordings: { fewest: 1, most: 2 }, unformed_entries: r.unformed_baselines!.flatMap((u, i) => (u.group === 'rig' ? [i] : [])) },
    ].sort((a, b) => r.forming_baselines!.findIndex((f) => f.group === a.group) - r.forming_baselines!.findIndex((f) => f.group === b.group)));
    const told = lines.filter((l) => l.includes('no baseline yet') || l.includes('without a baseline'));
    const groups = r.forming_baselines!.map((f) => f.group).join(', ');
    expect(told).toEqual([
      `  no baseline yet for 9 channel features of 2 groups (${groups}), so no change verdict: they wait for 1 to 2 more usable recordings (baselines form from the first 3); each is in quality.json (changes.unformed_baselines)`,
    ]);
  });

  it('many groups: one line naming the first three and how many more, while quality.json keeps every group', async () => {
    const names = Array.from({ length: 19 }, (_, g) => `rig_${String(g + 1).padStart(2, '0')}`);
    const entries = names.flatMap((group, g) => nightsOf(spec, group, [{ channel: 'acc', nights: g % 2 ? 1 : 2 }]));
    const { r, lines } = await reportOf(entries, spec);
    expect(r.forming_baselines).toHaveLength(19);
    expect(r.unformed_baselines).toHaveLength(19);
    const told = lines.filter((l) => l.includes('no baseline yet'));
    const first = r.forming_baselines!.slice(0, 3).map((f) => f.group).join(', ');
    expect(told).toEqual([
      `  no baseline yet for 19 channel features of 19 groups (${first}, and 16 more), so no change verdict: they wait for 1 to 2 more usable recordings (baselines form from the first 3); each is in quality.json (changes.unformed_baselines)`,
    ]);
  });

  it('a channel whose recordings also fail the checks is still named on its own line, with why', async () => {
    const { r, lines } = await reportOf(nightsOf(spec, 'rig', [{ channel: 'acc_ok', nights: 2 }, { channel: 'acc_bad', nights: 2, failing: [0] }]), spec);
    expect(r.forming_baselines).toEqual([{ group: 'rig', channel_features: 1, first: 3, more_recordings: { fewest: 1, most: 1 }, unformed_entries: [r.unformed_baselines!.findIndex((u) => u.channel === 'acc_ok')] }]);
    expect(lines).toContain('  no baseline yet for rig acc_bad (rms), so no change verdict: 1 of the 3 usable recordings it needs so far (1 fails the data-quality checks); it forms as more are stored');
    expect(lines).toContain('  no baseline yet for 1 channel feature of group rig, so no change verdict: it waits for 1 more usable recording (baselines form from the first 3); each is in quality.json (changes.unformed_baselines)');
    expect(lines.some((l) => l.includes('rig acc_ok'))).toBe(false);
  });

  it('quality.json\'s changes, forming_baselines included, hold to its schema', async () => {
    const { r } = await reportOf(nightsOf(spec, 'rig', [{ channel: 'acc', nights: 2 }]), spec);
    const schema = JSON.parse(readFileSync(join(repo, 'schemas', 'quality.schema.json'), 'utf8'));
    const ajv = new Ajv({ allErrors: true, strict: false });
    const validate = ajv.compile({ ...schema.properties.changes, definitions: schema.definitions });
    expect(validate(JSON.parse(JSON.stringify(r))), JSON.stringify(validate.errors)).toBe(true);
  });
});
