// A change the deadband holds, carried into a nightly --since period across stored nights whose figures no longer compare
// (here: reduced under other quality thresholds). An alarm deadband, common practice in alarm management, makes a verdict rest
// on the one before; a whole run computes every night, so a --since run must give the period the verdicts a whole run gives
// (the README's promise, checked row for row against a real whole run over the same archive), or say it could not.
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { describe, expect, it } from 'vitest';
import { encodeWav } from '../scripts/wav-file.js';
import { oneRigArchive, quern, readJson, tempDir } from './helpers.js';

const FS = 1000;
const ARCHIVE_YAML = oneRigArchive(FS);
const SPEC = 'statistics: {}\ntrends: { features: [rms] }\n';
// Other quality thresholds: every stored figure then no longer compares (no spike in these signals, so no verdict differs).
const FORMER_SPEC = `${SPEC}quality: { spikes: { fail_fraction: 0.0001 } }\n`;

/**
 * Night n: a 50 Hz tone of `level` times 0.1 of full scale, with a little seeded noise. Against a baseline near 1, a level of
 * 2.5 is +8 dB (changed); 1.55 is +3.8 dB and a score of 5.5 against the 10 % spread floor, inside both thresholds (6 dB, 6)
 * but not by the 20 % deadband (4.8 dB, 4.8): a change before it holds.
 */
function night(n: number, level: number): Buffer {
  let a = 7000 + n;
  const u = () => { a = (a + 0x6d2b79f5) >>> 0; let t = Math.imul(a ^ (a >>> 15), a | 1); t ^= t + Math.imul(t ^ (t >>> 7), t | 61); return ((t ^ (t >>> 14)) >>> 0) / 4294967296; };
  const x = Float64Array.from({ length: FS }, (_, i) => 0.1 * level * Math.sin(2 * Math.PI * 50 * i / FS) + 0.0005 * (u() - 0.5));
  return encodeWav({ sampleRate: FS, channels: [x], origination: new Date(Date.UTC(2026, 0, 1 + n, 2)) });
}
const day = (n: number) => new Date(Date.UTC(2026, 0, 1 + n)).toISOString().slice(0, 10);
const name = (n: number) => `rig/${day(n)}.wav`;
const levelOf = (n: number) => (n < 3 ? [1, 1.01, 0.99][n] : n === 3 ? 2.5 : 1.55);

function rig(nights: number) {
  const root = tempDir(), archive = join(root, 'archive');
  mkdirSync(join(archive, 'rig'), { recursive: true });
  writeFileSync(join(archive, 'archive.yaml'), ARCHIVE_YAML);
  writeFileSync(join(root, 'former.yaml'), FORMER_SPEC);
  writeFileSync(join(root, 'spec.yaml'), SPEC);
  for (let n = 0; n < nights; n++) writeFileSync(join(archive, name(n)), night(n, levelOf(n)));
  const reduce = (out: string, specFile: string, ...more: string[]) => quern('reduce', archive, '--out', join(root, out), '--spec', join(root, specFile), '--jobs', '1', ...more);
  return { root, archive, reduce };
}

async function trendRows(out: string, where = 'true'): Promise<Record<string, unknown>[]> {
  const db = await (await DuckDBInstance.create()).connect();
  return (await db.runAndReadAll(`select * from '${out}/trends.parquet' where ${where} order by all`)).getRowObjectsJson() as Record<string, unknown>[];
}

describe('a change the deadband holds across nights stored under other options', () => {
  it('is carried into the --since period by recomputing the nights it rests on, as a whole run gives it', async () => {
    const { root, archive, reduce } = rig(6);
    expect(reduce('out', 'former.yaml', '--quiet').code).toBe(0);
    // Night 3 changed; nights 4 and 5 are held changed by the deadband.
    expect((await trendRows(join(root, 'out'))).map((x) => x.verdict)).toEqual(['steady', 'steady', 'steady', 'changed', 'changed', 'changed']);

    writeFileSync(join(archive, name(6)), night(6, levelOf(6)));
    const r = reduce('out', 'spec.yaml', '--since', day(6));
    expect(r.code, r.stdout + r.stderr).toBe(0);
    expect(r.stdout).toContain('  BASELINE recomputed 3 recordings holding baseline places');
    expect(r.stdout).toContain('  HELD    recomputed 3 stored recordings before this period whose figures did not compare, so the changes the deadband holds carry into the period as in a whole run; see run.json (period.recomputed_for_held_changes)');
    expect(r.stdout).toMatch(/CHANGED rig acc rms .* \(back inside its threshold, not yet by the deadband\), since 2026-01-04/);
    const run = readJson(join(root, 'out', 'run.json'));
    expect(run.period.recomputed_for_held_changes).toEqual({
      count: 3, failed: 0, recordings: [3, 4, 5].map((n) => ({ recording: name(n), group: 'rig', why: 'spec changed for quality', status: 'reduced' })),
    });
    expect(run.recordings.map((x: any) => x.recording)).toEqual([name(6)]);
    expect(readJson(join(root, 'out', 'quality.json')).changes.held_across_stale).toBeUndefined();

    expect(reduce('fresh', 'spec.yaml', '--quiet').code).toBe(0);
    const nightly = await trendRows(join(root, 'out'));
    expect(nightly.map((x) => x.verdict)).toEqual(['changed']);
    expect(nightly).toEqual(await trendRows(join(root, 'fresh'), `recording = '${name(6)}'`));
  }, 180_000);

  it('a hold over more stored nights than a nightly run recomputes is named, with what to run', async () => {
    // Night 3 changed, then 62 nights held: the run recomputes the nearest 60 (4 + 8 + 16 + 32), and 3 remain.
    const NIGHTS = 66;
    const { root, archive, reduce } = rig(NIGHTS);
    expect(reduce('out', 'former.yaml', '--quiet').code).toBe(0);
    writeFileSync(join(archive, name(NIGHTS)), night(NIGHTS, levelOf(NIGHTS)));
    const r = reduce('out', 'spec.yaml', '--since', day(NIGHTS));
    expect(r.code, r.stdout + r.stderr).toBe(0);
    expect(r.stdout).toContain('  HELD    recomputed 60 stored recordings before this period');
    expect(r.stdout).toContain('  HELD    1 channel feature may hold a change the deadband carries across 3 stored recordings reduced under other spec options, which this run did not compute again, so its verdict may differ from a whole run\'s: rig acc (rms); run once without --since to compute them (quality.json: changes.held_across_stale)');
    expect(readJson(join(root, 'out', 'quality.json')).changes.held_across_stale).toEqual([{ group: 'rig', channel: 'acc', channel_unit: 'm/s^2', features: ['rms'], stale_recordings: 3, stored: ['options'] }]);
    expect(readJson(join(root, 'out', 'run.json')).period.recomputed_for_held_changes.recordings.map((x: any) => x.recording)).toEqual(Array.from({ length: 60 }, (_, i) => name(6 + i)));

    // The whole run it asks for computes the rest: the night reads changed, held, and nothing is left to name.
    const whole = reduce('out', 'spec.yaml');
    expect(whole.code).toBe(0);
    expect(whole.stdout).not.toMatch(/HELD/);
    expect((await trendRows(join(root, 'out'), `recording = '${name(NIGHTS)}'`)).map((x) => x.verdict)).toEqual(['changed']);
  }, 300_000);
});
