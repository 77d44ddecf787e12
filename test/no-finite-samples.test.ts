// A channel whose every sample is missing (a float WAV channel all NaN) has no figure of its signal: its figures are null,
// not the 0 an average or a peak search starts from, in features.parquet and the exports; the schema says they may be;
// and the flags that judge the signal say it has no finite samples, leaving the failure to the dropout flag.
// What a figure of no samples is: undefined (numpy: np.nanmax of an all-NaN array is NaN with a warning; common practice).
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { parse } from 'csv-parse/sync';
import { beforeAll, describe, expect, it } from 'vitest';
import { encodeWav } from '../scripts/wav-file.js';
import { quern, readJson, repo, tempDir } from './helpers.js';

const FS = 2000, N = 4 * FS;

describe('a channel with no finite samples', () => {
  let out = '';
  let rows: Record<string, unknown>[] = [];
  beforeAll(async () => {
    const archive = join(tempDir(), 'archive');
    mkdirSync(archive);
    writeFileSync(join(archive, 'archive.yaml'), 'groups:\n  - name: bench\n    match: "*.wav"\n    channels:\n'
      + '      - { name: acc, quantity: acceleration, unit: m/s^2, max_frequency_hz: 500 }\n'
      + '      - { name: lost, quantity: voltage, unit: V, max_frequency_hz: 500 }\n');
    const tone = Float64Array.from({ length: N }, (_, i) => 0.5 * Math.sin((2 * Math.PI * 50 * i) / FS));
    writeFileSync(join(archive, 'run-1.wav'), encodeWav({ sampleRate: FS, encoding: 'float32', channels: [tone, new Float64Array(N).fill(NaN)], origination: new Date(Date.UTC(2026, 3, 1, 8)) }));
    out = join(archive, '..', 'out');
    expect(quern('reduce', archive, '--out', out, '--quiet', '--export', 'csv,xlsx').code).toBe(0);
    const db = await (await DuckDBInstance.create()).connect();
    rows = (await db.runAndReadAll(`select * from '${join(out, 'features.parquet')}' order by channel`)).getRowObjectsJS() as Record<string, unknown>[];
  });

  it('reads true_peak, max_twrms_125ms and max_twrms_1000ms as null (DuckDB\'s reading of features.parquet), the tone beside it as numbers', () => {
    const lost = rows.find((r) => r.channel === 'lost')!, acc = rows.find((r) => r.channel === 'acc')!;
    expect(Number(lost.n_nonfinite)).toBe(N);
    for (const c of ['true_peak', 'max_twrms_125ms', 'max_twrms_1000ms', 'rms', 'peak', 'mean']) expect(lost[c], c).toBeNull();
    // The tone's slow-weighted maximum settles on its RMS, A/√2 (IEC 61672-1 time weighting of a steady sine), within the 4 s.
    expect(acc.max_twrms_1000ms as number).toBeCloseTo(0.5 / Math.SQRT2, 2);
    expect(acc.true_peak as number).toBeGreaterThan(0.49);
  });

  it('exports those as empty cells', () => {
    const [head, ...lines] = parse(readFileSync(join(out, 'features.csv'), 'utf8'), { record_delimiter: '\r\n' }) as string[][];
    const names = head.map((h) => h.replace(/ \[.*\]$/, ''));
    const lost = lines.find((l) => l[names.indexOf('channel')] === 'lost')!;
    for (const c of ['true_peak', 'max_twrms_125ms', 'max_twrms_1000ms']) expect(lost[names.indexOf(c)], c).toBe('');
  });

  it('has every column that is null for it described as nullable in schemas/features.table.json', () => {
    const schema = readJson(join(repo, 'schemas', 'features.table.json'));
    const described = (name: string) => schema.columns.find((s: any) => s.name !== '<label>' && new RegExp(`^(${s.name.split(', ').map((n: string) => n.replace(/<[^>]+>/g, '.+')).join('|')})$`).test(name));
    const lost = rows.find((r) => r.channel === 'lost')!;
    const nulls = Object.keys(lost).filter((c) => lost[c] === null && c !== 'start_time');
    expect(nulls.length).toBeGreaterThan(10);
    for (const c of nulls) expect(described(c)?.type ?? `${c} not described`, c).toMatch(/nullable/);
  });

  it('has peak_capture and flatline say the channel has no finite samples, and leave the failure to dropout', () => {
    const q = readJson(join(out, 'quality.json'));
    const flags = q.recordings[0].channels.find((c: any) => c.channel === 'lost').flags as { name: string; severity: string; value: number | null; message: string }[];
    const flag = (name: string) => flags.find((f) => f.name === name)!;
    for (const name of ['peak_capture', 'flatline']) {
      expect(flag(name).message, name).toBe('not assessed: the channel has no finite samples (the dropout flag fails it)');
      expect(flag(name).severity, name).toBe('ok');
      expect(flag(name).value, name).toBeNull();
    }
    expect(flag('dropout').severity).toBe('fail');
    expect(flag('dropout').message).toMatch(/^8000 samples missing \(100 %\).*the channel has no finite samples/);
    // The tone beside it is judged as ever.
    const acc = q.recordings[0].channels.find((c: any) => c.channel === 'acc').flags as { name: string; message: string }[];
    expect(acc.find((f) => f.name === 'flatline')!.message).toMatch(/^spread /);
  });
});
