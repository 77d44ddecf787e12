// Nights across a corrected declaration: a nightly `--since` run after a channel's scale changed in archive.yaml must not hold
// the night, recomputed at the new scale, against baselines stored at the old one; a whole run then gives a fresh run's answer.
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { describe, expect, it } from 'vitest';
import { encodeWav } from '../scripts/wav-file.js';
import { quern, readJson, tempDir } from './helpers.js';

const FS = 8000;

/** Night n's recording: a 300 Hz tone and seeded noise, the same machine state every night. */
function night(n: number): Buffer {
  let a = 2000 + n;
  const u = () => { a = (a + 0x6d2b79f5) >>> 0; let t = Math.imul(a ^ (a >>> 15), a | 1); t ^= t + Math.imul(t ^ (t >>> 7), t | 61); return ((t ^ (t >>> 14)) >>> 0) / 4294967296; };
  const x = new Float64Array(FS);
  for (let i = 0; i < FS; i++) x[i] = (1.5 * Math.sin(2 * Math.PI * 300 * i / FS) + 0.2 * Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u())) / 100;
  return encodeWav({ sampleRate: FS, channels: [x], origination: new Date(Date.UTC(2026, 10, 1 + n, 2)) });
}
const day = (n: number) => `2026-11-${String(1 + n).padStart(2, '0')}`;
const NIGHTS = 6;

const archiveYaml = (scale: number) => `groups:
  - name: rig
    match: "rig/*.wav"
    sample_rate: ${FS}
    channels:
      - { name: acc, quantity: acceleration, unit: m/s^2, scale: ${scale}, range: [-${scale}, ${scale}], bits: 16 }
`;
const SPEC = 'statistics: {}\ntrends: { features: [rms] }\n';

async function rmsRows(out: string): Promise<{ recording: string; value: number; baseline: number | null; verdict: string | null }[]> {
  const db = await (await DuckDBInstance.create()).connect();
  return (await db.runAndReadAll(`select recording, value, baseline, verdict from '${out}/trends.parquet' order by recording`)).getRowObjectsJS() as any;
}

function rig() {
  const root = tempDir(), archive = join(root, 'archive');
  mkdirSync(join(archive, 'rig'), { recursive: true });
  writeFileSync(join(archive, 'archive.yaml'), archiveYaml(100));
  writeFileSync(join(root, 'spec.yaml'), SPEC);
  for (let n = 0; n < NIGHTS; n++) writeFileSync(join(archive, 'rig', `${day(n)}.wav`), night(n));
  const reduce = (out: string, ...more: string[]) => quern('reduce', archive, '--out', out, '--spec', join(root, 'spec.yaml'), '--jobs', '1', ...more);
  return { root, archive, reduce };
}

describe('a nightly run after a channel\'s scale was corrected in archive.yaml', () => {
  it('recomputes the stored baseline recordings at the new scale in the --since run itself; a whole run then equals a fresh one', async () => {
    const { root, archive, reduce } = rig(), out = join(root, 'out'), fresh = join(root, 'fresh');
    expect(reduce(out, '--quiet').code).toBe(0);
    expect((await rmsRows(out)).every((r) => r.verdict === 'steady')).toBe(true);

    // The sensitivity was wrong: scale 100 → 200 doubles every figure (+6.02 dB), the same machine state.
    writeFileSync(join(archive, 'archive.yaml'), archiveYaml(200));
    const r = reduce(out, '--since', day(NIGHTS - 1), '--exit-on', 'changed');
    expect(r.code).toBe(0);
    expect(r.stdout).not.toMatch(/CHANGED/);
    expect(r.stdout).toMatch(/BASELINE recomputed 3 recordings holding baseline places, stored under another declaration of their group/);
    expect(readJson(join(out, 'quality.json')).changes.stale_baselines).toBe(0);
    const [row] = await rmsRows(out);
    expect(row).toMatchObject({ recording: `rig/${day(NIGHTS - 1)}.wav`, verdict: 'steady' });
    expect(row.baseline).not.toBeNull();

    // A whole run recomputes the earlier nights at the new scale; a fresh run over the same archive is the reference.
    expect(reduce(out, '--quiet').code).toBe(0);
    expect(reduce(fresh, '--quiet').code).toBe(0);
    const whole = await rmsRows(out);
    expect(whole).toEqual(await rmsRows(fresh));
    expect(whole.map((x) => x.verdict)).toEqual(Array(NIGHTS).fill('steady'));
    // The night the --since run recomputed holds the same figure as the whole run's.
    expect(whole[NIGHTS - 1].value).toBe(row.value);
    expect(readJson(join(out, 'quality.json')).changes.stale_baselines).toBe(0);
  }, 120_000);

  it('quern merge takes the declaration the shards stored this run\'s recordings under', async () => {
    const { root, archive, reduce } = rig(), out = join(root, 'out');
    const shards = (...more: string[]) => {
      for (const k of [1, 2]) expect(reduce(out, '--shard', `${k}/2`, '--quiet', ...more).code).toBe(0);
      return quern('merge', out, '--jobs', '1', '--exit-on', 'changed');
    };
    expect(shards().code).toBe(0);
    writeFileSync(join(archive, 'archive.yaml'), archiveYaml(200));
    const m = shards('--since', day(NIGHTS - 1));
    expect(m.stderr).toBe('');
    expect(m.code).toBe(0);
    expect(m.stdout).not.toMatch(/CHANGED/);
    expect(readJson(join(out, 'quality.json')).changes.stale_baselines).toBe(1);
    expect((await rmsRows(out))[0]).toMatchObject({ baseline: null, verdict: null });
  }, 120_000);
});
