// Spreadsheet exports: RFC 4180 CSV read back by a strict parser, XLSX read back by a second, independent reader (SheetJS),
// numbers equal to the Parquet values (read by DuckDB), and formula injection neutralised. LibreOffice's reading is in test/system/.
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { parse } from 'csv-parse/sync';
import ExcelJS from 'exceljs';
import { beforeAll, describe, expect, it } from 'vitest';
import * as XLSX from 'xlsx';
import { neutralise } from '../pipeline/exports/csv.js';
import { encodeWav } from '../scripts/wav-file.js';
import { quern, sampleArchiveCopy, tempDir } from './helpers.js';

const INJECTION = '=HYPERLINK("http://example.invalid","x")';

async function parquetRows(path: string) {
  const db = await (await DuckDBInstance.create()).connect();
  return (await db.runAndReadAll(`select * from '${path}'`)).getRowObjectsJS() as Record<string, unknown>[];
}
const key = (r: Record<string, unknown>) => `${r.recording}|${r.channel}`;
/** The CSV/XLSX header cell for a column: "name" or "name [unit]". */
const base = (header: string) => header.replace(/ \[.*\]$/, '');

describe('exports of the sample archive', () => {
  let out = '';
  let parquet: Record<string, unknown>[] = [];
  beforeAll(async () => {
    const archive = sampleArchiveCopy();
    out = join(archive, '..', 'out');
    const r = quern('reduce', archive, '--out', out, '--quiet', '--export', 'csv,xlsx', '--wide');
    expect(r.stdout).toMatch(/export:\s+.*tables\.xlsx/);
    parquet = await parquetRows(join(out, 'features.parquet'));
  });

  it('writes RFC 4180 CSV (CRLF, quoted text, UTF-8) that a strict parser reads back to the Parquet values at full double precision', () => {
    const text = readFileSync(join(out, 'features.csv'), 'utf8');
    expect(text.includes('\r\n')).toBe(true);
    expect(text.replace(/\r\n/g, '').includes('\n')).toBe(false);
    const rows: string[][] = parse(text, { relax_quotes: false, relax_column_count: false, record_delimiter: '\r\n' });
    const header = rows[0].map(base);
    expect(rows[0]).toContain('rms [channel unit]');
    expect(rows[0]).toContain('velocity_10_1000_rms [mm/s]');
    expect(rows.length - 1).toBe(parquet.length);
    const byKey = new Map(parquet.map((r) => [key(r), r]));
    let compared = 0;
    for (const row of rows.slice(1)) {
      const obj = Object.fromEntries(header.map((h, i) => [h, row[i]]));
      const p = byKey.get(`${obj.recording}|${obj.channel}`)!;
      for (const [h, v] of Object.entries(obj)) {
        const pv = p[h];
        if (typeof pv === 'number') { expect(Number(v), h).toBe(pv); compared++; }
        if (pv === null) expect(v, h).toBe('');
      }
    }
    expect(compared).toBeGreaterThan(1000);
    // Column order is the table's own, and stable.
    expect(header.slice(0, 5)).toEqual(['recording', 'group', 'channel', 'quantity', 'unit']);
  });

  it('leaves no CSV of a table the latest export did not write: trends turned off and no --wide remove trends.csv and features-wide.csv', () => {
    const archive = sampleArchiveCopy(), here = join(archive, '..', 'out-stale');
    expect(quern('reduce', archive, '--out', here, '--quiet', '--export', 'csv', '--wide').code).toBe(1);
    for (const f of ['trends.csv', 'features-wide.csv', 'features.csv']) expect(existsSync(join(here, f)), f).toBe(true);
    const spec = join(archive, '..', 'no-trends.yaml');
    writeFileSync(spec, 'statistics: {}\n');
    expect(quern('reduce', archive, '--out', here, '--quiet', '--spec', spec, '--export', 'csv').code).toBe(1);
    expect(existsSync(join(here, 'trends.parquet'))).toBe(false);
    for (const f of ['trends.csv', 'features-wide.csv', 'spectra.csv']) expect(existsSync(join(here, f)), f).toBe(false);
    expect(existsSync(join(here, 'features.csv'))).toBe(true);
  });

  it('names every CSV column\'s unit in one pair of brackets, the trends\' values in their feature\'s unit', () => {
    for (const table of ['features', 'windows', 'spectra', 'trends']) {
      const [header] = parse(readFileSync(join(out, `${table}.csv`), 'utf8'), { record_delimiter: '\r\n', to_line: 1 }) as string[][];
      for (const cell of header) expect(cell, `${table}.csv`).not.toMatch(/\[\[|\]\]/);
      if (table === 'trends') expect(header).toEqual(expect.arrayContaining(['unit', 'value [feature unit]', 'baseline [feature unit]']));
    }
  });

  it('writes a wide layout: one row per recording, channel-prefixed columns with the channel unit resolved', () => {
    const rows: string[][] = parse(readFileSync(join(out, 'features-wide.csv'), 'utf8'), { record_delimiter: '\r\n' });
    expect(rows.length - 1).toBe(new Set(parquet.map((r) => r.recording)).size);
    expect(rows[0]).toContain('acc_de.rms [m/s^2]');
    expect(rows[0]).toContain('pressure.mean [bar]');
    const h = rows[0];
    const night = rows.find((r) => r[0] === 'nightly/2026-11-16/pump-endurance.wav')!;
    const p = parquet.find((r) => r.recording === 'nightly/2026-11-16/pump-endurance.wav' && r.channel === 'mic')!;
    expect(Number(night[h.indexOf('mic.rms [Pa]')])).toBe(p.rms);
  });

  it('writes an XLSX workbook that SheetJS reads back to the same numbers, with sheets for every table and the run', async () => {
    const wb = XLSX.read(readFileSync(join(out, 'tables.xlsx')));
    expect(wb.SheetNames).toEqual(['features', 'features wide', 'windows', 'cycles', 'trends', 'quality flags', 'run']);
    const rows = XLSX.utils.sheet_to_json<unknown[]>(wb.Sheets.features, { header: 1, raw: true });
    const header = (rows[0] as string[]).map(base);
    const byKey = new Map(parquet.map((r) => [key(r), r]));
    let compared = 0;
    for (const row of rows.slice(1)) {
      const obj = Object.fromEntries(header.map((h, i) => [h, row[i]]));
      const p = byKey.get(`${obj.recording}|${obj.channel}`)!;
      for (const h of header) if (typeof p[h] === 'number') { expect(obj[h], h).toBe(p[h]); compared++; }
    }
    expect(compared).toBeGreaterThan(1000);
    expect(wb.Sheets.features['!autofilter']).toBeDefined();
    const run = XLSX.utils.sheet_to_json<string[]>(wb.Sheets.run, { header: 1 });
    expect(run.map((r) => r[0])).toEqual(expect.arrayContaining(['tool', 'run id', 'archive', 'spec', 'spec hash (SHA-256)']));
    // Layout, read with exceljs: frozen header row, severities filled with colour.
    const xl = new ExcelJS.Workbook();
    await xl.xlsx.readFile(join(out, 'tables.xlsx'));
    const ws = xl.getWorksheet('features')!;
    expect(ws.views[0]).toMatchObject({ state: 'frozen', ySplit: 1 });
    const qcol = (ws.getRow(1).values as string[]).indexOf('quality');
    const failRow = ws.getRows(2, ws.rowCount - 1)!.find((r) => r.getCell(qcol).value === 'fail')!;
    expect((failRow.getCell(qcol).fill as ExcelJS.FillPattern).fgColor?.argb).toBe('FFF1D3CD');
  });

  it('rounds to the number of significant digits asked for, and writes semicolons with decimal commas and a byte-order mark on request', async () => {
    quern('export', out, '--to', 'csv', '--digits', '6', '--decimal-comma', '--bom');
    const text = readFileSync(join(out, 'features.csv'), 'utf8');
    expect(text.charCodeAt(0)).toBe(0xfeff);
    const rows: string[][] = parse(text, { delimiter: ';', bom: true, record_delimiter: '\r\n' });
    const header = rows[0].map(base);
    const i = header.indexOf('rms');
    for (const row of rows.slice(1)) {
      const p = parquet.find((r) => r.recording === row[0] && r.channel === row[2])!;
      expect(Number(row[i].replace(',', '.'))).toBe(Number((p.rms as number).toPrecision(6)));
    }
  });
});

describe('formula injection (OWASP, "CSV Injection")', () => {
  let out = '';
  beforeAll(() => {
    const archive = join(tempDir(), 'archive');
    mkdirSync(archive);
    writeFileSync(join(archive, 'archive.yaml'), `groups:\n  - name: g\n    match: "*.wav"\n    labels: { rig: "@SUM(1+1)" }\n    channels:\n      - { name: '${INJECTION}', quantity: voltage, unit: "-V" }\n`);
    writeFileSync(join(archive, '+cmd.wav'), encodeWav({ sampleRate: 1000, channels: [Float64Array.from({ length: 2000 }, (_, i) => 0.3 * Math.sin(i / 7))] }));
    out = join(archive, '..', 'out');
    quern('reduce', archive, '--out', out, '--quiet', '--export', 'csv,xlsx');
  });

  it('CSV: a channel, a file and a label that a spreadsheet would run as formulas arrive as inert text', () => {
    const rows: string[][] = parse(readFileSync(join(out, 'features.csv'), 'utf8'), { record_delimiter: '\r\n' });
    const h = rows[0].map(base);
    const row = rows[1];
    expect(row[h.indexOf('channel')]).toBe(`'${INJECTION}`);
    expect(row[h.indexOf('recording')]).toBe("'+cmd.wav");
    expect(row[h.indexOf('rig')]).toBe("'@SUM(1+1)");
    expect(row[h.indexOf('unit')]).toBe("'-V");
    // Numbers are not text: a negative mean stays a number.
    expect(Number.isFinite(Number(row[h.indexOf('min')]))).toBe(true);
    expect(row[h.indexOf('min')].startsWith('-')).toBe(true);
  });

  it('a label that is a plain signed number keeps its sign without the apostrophe; anything a spreadsheet could compute does not', () => {
    for (const plain of ['-12.5', '+3', '-0.5e-3', '-.25', '1e6']) expect(neutralise(plain)).toBe(plain);
    for (const formula of ['-2+3', '+A1', '-SUM(1)', '-12.5%', '- 1', '=-1']) expect(neutralise(formula)).toBe(`'${formula}`);
  });

  it('XLSX: the same cells are strings, not formulas, for SheetJS', () => {
    const wb = XLSX.read(readFileSync(join(out, 'tables.xlsx')));
    const ws = wb.Sheets.features;
    const cells = Object.entries(ws).filter(([k]) => !k.startsWith('!')).map(([, c]) => c as XLSX.CellObject);
    expect(cells.some((c) => c.f)).toBe(false);
    expect(cells.find((c) => String(c.v).includes('HYPERLINK'))).toMatchObject({ t: 's', v: `'${INJECTION}` });
  });
});
