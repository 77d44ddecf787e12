// quern export reads each Parquet table a batch at a time and writes its CSV lines and worksheet rows as they come.
// Held against the export written before streaming (quern 0.4.0, every table in memory: test/fixtures/export-stream/
// expected.json, made by make-expected.ts there), and against the tables as DuckDB reads them.
import { createHash } from 'node:crypto';
import { cpSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { parse } from 'csv-parse/sync';
import { describe, expect, it } from 'vitest';
import * as XLSX from 'xlsx';
import { runExport } from '../pipeline/exports/export.js';
import { openParquetTable } from '../pipeline/exports/tables.js';
import { fixture, readJson, tempDir } from './helpers.js';
import { workbookContent } from './workbook-content.js';

const expected = readJson(fixture('export-stream', 'expected.json'));
const TABLES = ['features', 'windows', 'cycles', 'trends'];

/** A private copy of the reduced folder: the export writes beside its tables. */
function reducedCopy(): string {
  const dir = join(tempDir(), 'out');
  cpSync(fixture('export-stream'), dir, { recursive: true });
  return dir;
}

async function duckCount(path: string): Promise<number> {
  const db = await (await DuckDBInstance.create()).connect();
  return Number((await db.runAndReadAll(`select count(*) as n from '${path}'`)).getRowObjectsJS()[0].n);
}

describe('a streamed export against the export written with every table in memory', () => {
  // 50 rows a batch: every table crosses batch boundaries within a recording and a channel, and the workbook's width
  // sample (200 rows) spans four batches; 65,536: each table in one.
  it.each([50, 65_536])('writes every CSV byte for byte as before, read %i rows at a time', async (batchRows) => {
    const out = reducedCopy();
    await runExport(out, { to: ['csv', 'xlsx'], wide: true, batchRows });
    for (const [file, want] of Object.entries(expected.csv) as [string, { bytes: number; sha256: string }][]) {
      const bytes = readFileSync(join(out, file));
      expect({ bytes: bytes.length, sha256: createHash('sha256').update(bytes).digest('hex') }, file).toEqual(want);
    }
  });

  it('writes a workbook that SheetJS and ExcelJS read as before: cells, types, formats, widths, frozen header, filters, fills', async () => {
    const out = reducedCopy();
    await runExport(out, { to: ['xlsx'], wide: true, batchRows: 50 });
    const got = await workbookContent(join(out, 'tables.xlsx'));
    expect(got.sheets).toEqual(expected.workbook.sheets);
    for (const sheet of expected.workbook.sheets as string[]) for (const [aspect, digest] of Object.entries(expected.workbook[sheet])) expect((got[sheet] as Record<string, string>)[aspect], `${sheet}: ${aspect}`).toBe(digest);
  });
});

describe('reading a Parquet table in batches', () => {
  it('gives every row once, in batches of at most the size asked for, as many as DuckDB counts', async () => {
    for (const name of TABLES) {
      const path = fixture('export-stream', `${name}.parquet`);
      const t = await openParquetTable(path, name, 50);
      const sizes: number[] = [];
      for await (const rows of t.batches()) sizes.push(rows.length);
      const n = await duckCount(path);
      expect(t.rowCount, name).toBe(n);
      expect(sizes.reduce((a, b) => a + b, 0), name).toBe(n);
      expect(Math.max(...sizes), name).toBeLessThanOrEqual(50);
    }
  });
});

describe('a table longer than a worksheet takes', () => {
  it('is left out of the workbook with a note of its rows, and its CSV is whole', async () => {
    const out = reducedCopy();
    const cycles = await duckCount(join(out, 'cycles.parquet'));
    // The XLSX format's 1,048,576 rows (Office Open XML, ECMA-376) stood in for by a limit below the cycles' count.
    await runExport(out, { to: ['csv', 'xlsx'], batchRows: 500, sheetRows: cycles - 1 });
    const wb = XLSX.read(readFileSync(join(out, 'tables.xlsx')));
    expect(wb.SheetNames).toEqual(['features', 'windows', 'trends', 'quality flags', 'run']);
    const facts = XLSX.utils.sheet_to_json<string[]>(wb.Sheets.run, { header: 1 });
    expect(facts).toContainEqual(['cycles', `not in this workbook (${cycles} rows): read cycles.parquet or cycles.csv`]);
    const rows = parse(readFileSync(join(out, 'cycles.csv'), 'utf8'), { record_delimiter: '\r\n' }) as string[][];
    expect(rows.length - 1).toBe(cycles);
  });
});
