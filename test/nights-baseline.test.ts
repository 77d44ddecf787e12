// Nights across a spec change: a nightly `--since` run after the envelope filter changed must not move a channel's baseline
// onto the nights after the change (where a real change already sits), and a whole run must then give a fresh run's answer.
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { describe, expect, it } from 'vitest';
import { encodeWav } from '../scripts/wav-file.js';
import { quern, readJson, tempDir } from './helpers.js';

const FS = 12800;
const TONE_FROM = 3; // a 3200 Hz tone (inside both envelope filters below) appears on this night and stays

/** Night n's recording: a 300 Hz tone and seeded noise, then from TONE_FROM on a strong tone in the envelope's band. */
function night(n: number): Buffer {
  let a = 1000 + n;
  const u = () => { a = (a + 0x6d2b79f5) >>> 0; let t = Math.imul(a ^ (a >>> 15), a | 1); t ^= t + Math.imul(t ^ (t >>> 7), t | 61); return ((t ^ (t >>> 14)) >>> 0) / 4294967296; };
  const x = new Float64Array(FS);
  for (let i = 0; i < FS; i++) {
    const t = i / FS;
    x[i] = (1.5 * Math.sin(2 * Math.PI * 300 * t) + 0.5 * Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u()) + (n >= TONE_FROM ? 3 * Math.sin(2 * Math.PI * 3200 * t) : 0)) / 100;
  }
  return encodeWav({ sampleRate: FS, channels: [x], origination: new Date(Date.UTC(2026, 10, 1 + n, 2)) });
}
const day = (n: number) => `2026-11-${String(1 + n).padStart(2, '0')}`;

const ARCHIVE_YAML = `groups:
  - name: rig
    match: "rig/*.wav"
    sample_rate: ${FS}
    channels:
      - { name: acc, quantity: acceleration, unit: m/s^2, scale: 100, range: [-100, 100], bits: 16, max_frequency_hz: 5000 }
`;
const spec = (low: number, high: number) => `statistics: {}
envelope: { filter: { kind: bandpass, order: 4, low_hz: ${low}, high_hz: ${high}, zero_phase: true } }
trends: { features: [env_rms] }
`;

async function envRms(out: string): Promise<{ recording: string; baseline: number | null; verdict: string | null }[]> {
  const db = await (await DuckDBInstance.create()).connect();
  return (await db.runAndReadAll(`select recording, baseline, verdict from '${out}/trends.parquet' order by recording`)).getRowObjectsJS() as any;
}

describe('a nightly run after the envelope filter changed', () => {
  it('keeps the first recordings as the baseline, recomputed under the new filter by the first nightly run: never a silent new baseline', async () => {
    const root = tempDir(), archive = join(root, 'archive'), out = join(root, 'out'), fresh = join(root, 'fresh');
    mkdirSync(join(archive, 'rig'), { recursive: true });
    writeFileSync(join(archive, 'archive.yaml'), ARCHIVE_YAML);
    writeFileSync(join(root, 'old.yaml'), spec(2500, 4500));
    writeFileSync(join(root, 'new.yaml'), spec(2000, 5000));
    for (let n = 0; n < 6; n++) writeFileSync(join(archive, 'rig', `${day(n)}.wav`), night(n));
    expect(quern('reduce', archive, '--out', out, '--spec', join(root, 'old.yaml'), '--jobs', '1', '--quiet').code).toBe(0);
    expect((await envRms(out)).filter((r) => r.recording >= `rig/${day(TONE_FROM)}`).every((r) => r.verdict === 'changed')).toBe(true);

    // The filter changes; three more nights come, each reduced by a nightly run over its own night only.
    for (let n = 6; n < 9; n++) {
      writeFileSync(join(archive, 'rig', `${day(n)}.wav`), night(n));
      const r = quern('reduce', archive, '--out', out, '--spec', join(root, 'new.yaml'), '--since', day(n), '--jobs', '1');
      expect(r.code).toBe(0);
      const [row] = await envRms(out);
      // The first three recordings are still the baseline: the first night after the change recomputes their envelope figures under the new filter.
      expect(row).toMatchObject({ recording: `rig/${day(n)}.wav`, verdict: 'changed' });
      expect(row.baseline).not.toBeNull();
      if (n === 6) expect(r.stdout).toMatch(/BASELINE recomputed 3 recordings holding baseline places, stored under other spec options/);
      else expect(r.stdout).not.toMatch(/BASELINE/);
      expect(readJson(join(out, 'quality.json')).changes.stale_baselines).toBe(0);
    }

    // A whole run recomputes the old nights under the new filter and gives a fresh run's answer: changed since the tone came.
    expect(quern('reduce', archive, '--out', out, '--spec', join(root, 'new.yaml'), '--jobs', '1', '--quiet').code).toBe(0);
    expect(quern('reduce', archive, '--out', fresh, '--spec', join(root, 'new.yaml'), '--jobs', '1', '--quiet').code).toBe(0);
    const whole = await envRms(out);
    expect(whole).toEqual(await envRms(fresh));
    expect(whole.map((r) => r.verdict)).toEqual(['steady', 'steady', 'steady', 'changed', 'changed', 'changed', 'changed', 'changed', 'changed']);
    expect(readJson(join(out, 'quality.json')).changes.stale_baselines).toBe(0);
  }, 120_000);
});

describe('a nightly run with no stored history before its period', () => {
  /** An archive of the rig's nights `from` to 5 (the tone comes on TONE_FROM), the spec, and an output folder not yet made. */
  function rigNights(from: number) {
    const root = tempDir(), archive = join(root, 'archive'), out = join(root, 'out');
    mkdirSync(join(archive, 'rig'), { recursive: true });
    writeFileSync(join(archive, 'archive.yaml'), ARCHIVE_YAML);
    writeFileSync(join(root, 'spec.yaml'), spec(2500, 4500));
    for (let n = from; n < 6; n++) writeFileSync(join(archive, 'rig', `${day(n)}.wav`), night(n));
    return { root, archive, out };
  }

  it('says its baselines were formed from the period alone, and not once earlier results are stored', async () => {
    const { root, archive, out } = rigNights(0);

    // A new output folder (or one whose cache/ was deleted): the baseline can only be the nights of the period, which hold the change.
    const r = quern('reduce', archive, '--out', out, '--spec', join(root, 'spec.yaml'), '--since', day(2), '--jobs', '1');
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/1 channel feature has its baseline formed from this period only: no earlier results are stored; run once without --since/);
    expect(readJson(join(out, 'quality.json')).changes.period_baselines).toBe(1);

    // A whole run stores the earlier nights; a nightly run after it forms nothing from its period alone.
    expect(quern('reduce', archive, '--out', out, '--spec', join(root, 'spec.yaml'), '--jobs', '1', '--quiet').code).toBe(0);
    expect(readJson(join(out, 'quality.json')).changes.period_baselines).toBeUndefined();
    const nightly = quern('reduce', archive, '--out', out, '--spec', join(root, 'spec.yaml'), '--since', day(5), '--jobs', '1');
    expect(nightly.code).toBe(0);
    expect(nightly.stdout).not.toMatch(/formed from this period only/);
    expect(readJson(join(out, 'quality.json')).changes.period_baselines).toBe(0);
    expect((await envRms(out))[0]).toMatchObject({ recording: `rig/${day(5)}.wav`, verdict: 'changed' });
  }, 120_000);

  it('says nothing of the kind when the archive holds nothing before the period: no run could form the baseline from more', () => {
    const { root, archive, out } = rigNights(2);
    const r = quern('reduce', archive, '--out', out, '--spec', join(root, 'spec.yaml'), '--since', day(2), '--jobs', '1');
    expect(r.code).toBe(0);
    expect(r.stdout).not.toMatch(/formed from this period only/);
    expect(readJson(join(out, 'quality.json')).changes.period_baselines).toBe(0);
  }, 60_000);
});
