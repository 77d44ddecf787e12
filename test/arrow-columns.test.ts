// Columns filled from typed arrays against the same rows built one object a row (toArrowTable): written as Parquet and read
// back by an independent reader (hyparquet), the rows, the schema and the key-value metadata agree.
import { parquetMetadataAsync, parquetReadObjects } from 'hyparquet';
import { compressors } from 'hyparquet-compressors';
import { Table as WasmTable, writeParquet } from 'parquet-wasm/node';
import * as arrow from 'apache-arrow';
import { describe, expect, it } from 'vitest';
import { columnsFor, columnsTable, type NumberColumn, type TextColumn } from '../pipeline/outputs/arrow-columns.js';
import { toArrowTable, writerProperties, type TableColumn } from '../pipeline/outputs/parquet.js';
import { SPECTRA_TABLE, TRENDS_TABLE } from '../pipeline/trends/tables.js';
import { uniform } from './dsp-signals.js';

const META = { 'quern.version': 'test' };

/** What a reader finds in the table written as Parquet: rows, schema, and the key-value metadata (whose order the writer does not keep). */
async function readBack(columns: TableColumn[], t: arrow.Table) {
  const bytes = writeParquet(WasmTable.fromIPCStream(arrow.tableToIPC(t, 'stream')), writerProperties(columns, META));
  const file = bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer;
  const meta = await parquetMetadataAsync(file);
  return { rows: await parquetReadObjects({ file, compressors }), schema: meta.schema, kv: [...(meta.key_value_metadata ?? [])].sort((a, b) => (a.key < b.key ? -1 : 1)), groups: meta.row_groups.map((g) => g.num_rows) };
}

describe('Arrow columns from typed arrays', () => {
  it('spectra: repeated names, bin frequencies and single-precision densities read back as the rows do', async () => {
    const u = uniform(7), rows: Record<string, string | number>[] = [];
    const built = columnsFor(SPECTRA_TABLE);
    for (const [recording, channels] of [['a/night-1.wav', ['acc', 'mic']], ['b/nächte-2.wav', ['acc']]] as const) {
      for (const channel of channels) {
        const density = Float32Array.from({ length: 1000 + Math.floor(u() * 100) }, () => u() * 1e-3), df = 25600 / 4096;
        (built.recording as TextColumn).add(recording, density.length); (built.channel as TextColumn).add(channel, density.length); (built.unit as TextColumn).add('m/s²', density.length);
        (built.frequency_hz as NumberColumn).addRamp(density.length, df); (built.density as NumberColumn).addAll(density);
        density.forEach((d, k) => rows.push({ recording, channel, unit: 'm/s²', frequency_hz: k * df, density: d }));
      }
    }
    const got = await readBack(SPECTRA_TABLE, columnsTable(SPECTRA_TABLE, built, META));
    expect(got.rows.length).toBe(rows.length);
    expect(got).toEqual(await readBack(SPECTRA_TABLE, toArrowTable(SPECTRA_TABLE, rows, META)));
  });

  it('text added many times at once (nulls, empty text, several-byte characters) reads back as one value a row', async () => {
    const u = uniform(23), columns: TableColumn[] = [{ ...SPECTRA_TABLE[0], nullable: true }], rows: Record<string, string | null>[] = [];
    const built = columnsFor(columns), recording = built.recording as TextColumn;
    const values = [null, '', 'a', 'night-3/rig-b/ch ä.wav', '振動', 'x'.repeat(700)];
    for (let i = 0; i < 400; i++) {
      const value = values[Math.floor(u() * values.length)], times = Math.floor(u() * 40);
      recording.add(value, times);
      for (let k = 0; k < times; k++) rows.push({ recording: value });
    }
    const got = await readBack(columns, columnsTable(columns, built, META));
    expect(got.rows.length).toBe(rows.length);
    expect(got).toEqual(await readBack(columns, toArrowTable(columns, rows, META)));
  });

  it('trends: text, nullable numbers and timestamps, values one at a time, read back as the rows do', async () => {
    const u = uniform(11), rows: Record<string, string | number | null>[] = [];
    const built = columnsFor(TRENDS_TABLE);
    const maybe = <T>(v: T) => (u() < 0.3 ? null : v);
    for (let i = 0; i < 3000; i++) {
      const row: Record<string, string | number | null> = {
        // Every trends row is placed in time, and says where its time came from.
        recording: `r${i % 17}.wav`, group: 'g', channel: ['acc', 'mic'][i % 2], feature: 'rms', unit: 'g', start_time: 1_700_000_000_000 + i * 1000, start_time_source: i % 3 ? 'recording' : 'modified',
        value: u(), baseline: maybe(u()), change_db: maybe(u() - 0.5), score: maybe(u() * 3), verdict: maybe('steady'), limit: maybe('warn'), quality: 'ok',
      };
      rows.push(row);
      for (const c of TRENDS_TABLE) (built[c.name] as { add(v: unknown): void }).add(row[c.name]);
    }
    const got = await readBack(TRENDS_TABLE, columnsTable(TRENDS_TABLE, built, META));
    expect(got.rows.length).toBe(rows.length);
    expect(got).toEqual(await readBack(TRENDS_TABLE, toArrowTable(TRENDS_TABLE, rows, META)));
  });
});
