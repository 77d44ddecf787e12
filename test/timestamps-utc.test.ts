// The tables' start_time columns hold instants: written as Parquet timestamps adjusted to UTC, as pyarrow writes a
// timestamp[ms, tz=UTC] column, so that readers (DuckDB here; pyarrow, Spark) take them as TIMESTAMP WITH TIME ZONE at
// the same instants, not as wall-clock readings of no zone. References: test/fixtures/timestamp-utc.parquet and
// timestamp-vectors.json, written by pyarrow from the bext starts of sample-archive/*.wav (make-timestamp-vectors.py).
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { parquetMetadataAsync } from 'hyparquet';
import { beforeAll, describe, expect, it } from 'vitest';
import { fixture, quern, readJson, sampleArchiveCopy } from './helpers.js';

const vectors = readJson<{ arrow_type: string; parquet_logical_type: string; starts_ms: Record<string, number> }>(fixture('timestamp-vectors.json'));
const reference = fixture('timestamp-utc.parquet');

async function duck(sql: string): Promise<Record<string, unknown>[]> {
  const db = await (await DuckDBInstance.create()).connect();
  return (await db.runAndReadAll(sql)).getRowObjectsJson() as Record<string, unknown>[];
}

/** The Parquet logical type of a file's column, as hyparquet reads the footer. */
async function logicalType(path: string, column: string): Promise<unknown> {
  const bytes = readFileSync(path);
  const meta = await parquetMetadataAsync(bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength));
  return meta.schema.find((e) => e.name === column)?.logical_type;
}

describe('start_time in the Parquet tables', () => {
  let out = '', archive = '';
  beforeAll(() => {
    archive = sampleArchiveCopy();
    out = join(archive, '..', 'out');
    expect(quern('reduce', archive, '--out', out, '--jobs', '1', '--quiet', '--export', 'csv').code).toBe(1); // one sample recording fails
  });

  it('is a timestamp adjusted to UTC, as pyarrow writes timestamp[ms, tz=UTC] (isAdjustedToUTC=true, milliseconds)', async () => {
    // pyarrow's own words for its reference column (test/fixtures/timestamp-vectors.json).
    expect(vectors.arrow_type).toBe('timestamp[ms, tz=UTC]');
    expect(vectors.parquet_logical_type).toMatch(/^Timestamp\(isAdjustedToUTC=true, timeUnit=milliseconds/);
    const ref = await logicalType(reference, 'start_time');
    expect(ref).toEqual({ type: 'TIMESTAMP', isAdjustedToUTC: true, unit: 'MILLIS' });
    for (const table of ['features', 'trends']) expect(await logicalType(join(out, `${table}.parquet`), 'start_time'), table).toEqual(ref);
  });

  it('reads back in DuckDB as TIMESTAMP WITH TIME ZONE, at the instants of the recordings\' bext starts', async () => {
    for (const file of [reference, join(out, 'features.parquet'), join(out, 'trends.parquet')]) {
      expect((await duck(`select distinct typeof(start_time) as t from '${file}'`)).map((r) => r.t), file).toEqual(['TIMESTAMP WITH TIME ZONE']);
    }
    for (const table of ['features', 'trends']) {
      const rows = await duck(`select distinct recording, epoch_ms(start_time)::double as ms from '${join(out, `${table}.parquet`)}' where recording in (select recording from '${reference}')`);
      // Every reference recording but the sample archive's one that fails (nightly/2026-11-22, cut short) has rows.
      const { 'nightly/2026-11-22/pump-endurance.wav': _failed, ...reduced } = vectors.starts_ms;
      expect(Object.fromEntries(rows.map((r) => [r.recording, r.ms])), table).toEqual(reduced);
      // The same instants as pyarrow's column, compared as DuckDB compares instants.
      const [{ differ }] = await duck(`select count(*)::int as differ from '${join(out, `${table}.parquet`)}' t join '${reference}' r using (recording) where t.start_time is distinct from r.start_time`);
      expect(differ, table).toBe(0);
    }
  });

  it('exports as the same ISO 8601 UTC text', () => {
    const [head, ...lines] = readFileSync(join(out, 'features.csv'), 'utf8').replace(/^\uFEFF/, '').trim().split(/\r?\n/);
    const at = head.split(',').findIndex((c) => c.replace(/"/g, '').startsWith('start_time'));
    const seen = new Map(lines.map((l) => l.split(',')).map((c) => [c[0].replace(/"/g, ''), c[at].replace(/"/g, '')]));
    for (const [recording, ms] of Object.entries(vectors.starts_ms).filter(([r]) => !r.startsWith('nightly/2026-11-22/'))) expect(seen.get(recording), recording).toBe(new Date(ms).toISOString());
  });

  it('is written once: an unchanged re-run finds the outputs current and rewrites nothing', async () => {
    const again = quern('reduce', archive, '--out', out, '--jobs', '1', '--quiet');
    expect(again.stdout).toMatch(/outputs: unchanged \(same digest as run [0-9a-f-]+\); not rewritten/);
    expect(await logicalType(join(out, 'features.parquet'), 'start_time')).toEqual({ type: 'TIMESTAMP', isAdjustedToUTC: true, unit: 'MILLIS' });
  });
});
