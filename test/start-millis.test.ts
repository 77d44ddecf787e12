// Start times are kept to the millisecond, the unit of the tables' timestamp[ms, tz=UTC] columns: a finer start (a CSV
// time column stamped to 100 µs) is rounded to the nearest millisecond, half up, where a JavaScript Date alone would drop
// the fraction (ECMA-262 TimeClip truncates). The workbook shows milliseconds where a start has them.
// Expected instants worked by hand from the ISO 8601 text (ISO 8601-1:2019 decimal fractions of a second).
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { parse } from 'csv-parse/sync';
import ExcelJS from 'exceljs';
import { beforeAll, describe, expect, it } from 'vitest';
import * as XLSX from 'xlsx';
import { startFrom } from '../stages/read/setting-values.js';
import { startOfTimes } from '../stages/read/time-steps.js';
import { quern, tempDir } from './helpers.js';

/** Each file's first time stamp and the start the tables keep for it. */
const STARTS: Record<string, [string, string]> = {
  'a.csv': ['2026-11-16T02:00:00.0007', '2026-11-16T02:00:00.001Z'], // 0.7 ms: nearer 1 ms than 0
  'b.csv': ['2026-11-16T02:00:00.9996', '2026-11-16T02:00:01.000Z'], // rounds up into the next second
  'c.csv': ['2026-11-16T02:00:00.1234', '2026-11-16T02:00:00.123Z'],
  'd.csv': ['2026-11-16T02:00:05.0000', '2026-11-16T02:00:05.000Z'], // a whole second
};

/** A 250 Hz CSV recording whose time column starts at `first` (stamped to 100 µs, as a logger prints it). */
function csvText(first: string): string {
  const t0 = Date.parse(`${first.slice(0, 19)}Z`), frac = Number(first.slice(19));
  const rows = Array.from({ length: 2000 }, (_, i) => {
    const s = frac + i * 0.004, whole = Math.floor(s + 1e-9);
    const stamp = new Date(t0 + whole * 1000).toISOString().slice(0, 19) + (s - whole).toFixed(4).slice(1);
    return `${stamp},${Math.sin(i / 3).toFixed(5)}`;
  });
  return ['time,x', ...rows].join('\n') + '\n';
}

describe('start times to the nearest millisecond', () => {
  let out = '';
  beforeAll(() => {
    const archive = join(tempDir(), 'archive');
    mkdirSync(archive);
    writeFileSync(join(archive, 'archive.yaml'), 'groups:\n  - name: logger\n    match: "*.csv"\n    channels:\n      - { name: x, quantity: voltage, unit: V }\n');
    for (const [file, [first]] of Object.entries(STARTS)) writeFileSync(join(archive, file), csvText(first));
    out = join(archive, '..', 'out');
    const r = quern('reduce', archive, '--out', out, '--quiet', '--export', 'csv,xlsx');
    expect(r.code, r.stderr).toBe(0);
  });

  it('keeps a CSV start finer than a millisecond rounded to the nearest one in features.parquet (DuckDB\'s reading) and features.csv', async () => {
    const db = await (await DuckDBInstance.create()).connect();
    const rows = (await db.runAndReadAll(`select recording, epoch_ms(start_time)::double as ms from '${join(out, 'features.parquet')}'`)).getRowObjectsJS();
    expect(Object.fromEntries(rows.map((r) => [r.recording, r.ms]))).toEqual(Object.fromEntries(Object.entries(STARTS).map(([f, [, start]]) => [f, Date.parse(start)])));
    const [head, ...lines] = parse(readFileSync(join(out, 'features.csv'), 'utf8'), { record_delimiter: '\r\n' }) as string[][];
    const at = head.findIndex((h) => h.startsWith('start_time'));
    for (const l of lines) expect(l[at], l[0]).toBe(STARTS[l[0]][1]);
  });

  it('rounds the same way wherever a start comes from: a declared value (HDF5 attribute, MAT-file variable) or a time column\'s POSIX seconds', () => {
    expect(startFrom('2026-11-16T02:00:00.0005Z', 'attribute start', 'the declaration').toISOString()).toBe('2026-11-16T02:00:00.001Z'); // half up
    expect(startFrom('2026-11-16T02:00:00.0004Z', 'attribute start', 'the declaration').toISOString()).toBe('2026-11-16T02:00:00.000Z');
    // 1794794400 s is 2026-11-16T02:00:00Z; the double nearest 1794794400.0007 times 1000 lies just below …400000.7.
    expect(startOfTimes(1794794400.0007)?.toISOString()).toBe('2026-11-16T02:00:00.001Z');
    expect(startOfTimes(1794794400.1234)?.toISOString()).toBe('2026-11-16T02:00:00.123Z');
  });

  it('shows milliseconds in the workbook where a start has them (yyyy-mm-dd hh:mm:ss.000), whole seconds where it has none, the value exact (SheetJS)', async () => {
    const xl = new ExcelJS.Workbook();
    await xl.xlsx.readFile(join(out, 'tables.xlsx'));
    const ws = xl.getWorksheet('features')!;
    const head = ws.getRow(1).values as string[];
    const rec = head.indexOf('recording'), at = head.findIndex((h) => typeof h === 'string' && h.startsWith('start_time'));
    const formats = Object.fromEntries(ws.getRows(2, ws.rowCount - 1)!.map((r) => [r.getCell(rec).value, r.getCell(at).numFmt]));
    expect(formats).toEqual({ 'a.csv': 'yyyy-mm-dd hh:mm:ss.000', 'b.csv': 'yyyy-mm-dd hh:mm:ss', 'c.csv': 'yyyy-mm-dd hh:mm:ss.000', 'd.csv': 'yyyy-mm-dd hh:mm:ss' });
    // The cell's serial day (1900 date system: 25569 is 1970-01-01) back to milliseconds.
    const wb = XLSX.read(readFileSync(join(out, 'tables.xlsx')));
    const rows = XLSX.utils.sheet_to_json<unknown[]>(wb.Sheets.features, { header: 1, raw: true });
    for (const r of rows.slice(1)) expect(Math.round(((r[at - 1] as number) - 25569) * 86_400_000), String(r[rec - 1])).toBe(Date.parse(STARTS[r[rec - 1] as string][1]));
    // What a spreadsheet shows for the cell with that format: SheetJS's own rendering of the number format.
    const a = rows.findIndex((r) => r[rec - 1] === 'a.csv');
    expect(XLSX.SSF.format('yyyy-mm-dd hh:mm:ss.000', rows[a][at - 1] as number)).toBe('2026-11-16 02:00:00.001');
  });
});
