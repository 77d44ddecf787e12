// quern export: spreadsheet-ready copies of a reduced folder's tables, beside them: CSV per table and one XLSX workbook.
import { existsSync } from 'node:fs';
import { readFile, rm } from 'node:fs/promises';
import { join, resolve } from 'node:path';
import { commitAll, StagedFile, WriteFailed, writing } from '../outputs/staged.js';
import { ExportFailed } from './export-failed.js';
import { csvHead, csvLines, type CsvOptions } from './csv.js';
import { BATCH_ROWS, openParquetTable, readQualityFlags, widen, type ExportTable } from './tables.js';
import { SECONDARY_TABLES } from '../outputs/tables.js';
import { UsageError } from '../declare/yaml-file.js';
import { checkOneRun } from './one-run.js';
import { periodFacts } from './period-facts.js';

export { ExportFailed };

export type ExportFormat = 'csv' | 'xlsx';
export interface ExportOptions extends CsvOptions {
  to: ExportFormat[];
  wide?: boolean;
  /** Rows read from a Parquet table and written out at a time. */
  batchRows?: number;
  /** Rows a worksheet takes below its header; a longer table is left out of the workbook with a note. */
  sheetRows?: number;
}

/** Tables a whole run writes when its spec asks for them (trends, spectra): exported when present. */
const RUN_TABLES = ['trends', 'spectra'];

/** File names of the exports, beside the Parquet tables. */
export const CSV_FILES: Record<string, string> = {
  features: 'features.csv', ...Object.fromEntries([...Object.keys(SECONDARY_TABLES), ...RUN_TABLES].map((name) => [name, `${name}.csv`])), 'quality flags': 'quality-flags.csv', 'features wide': 'features-wide.csv',
};
export const XLSX_FILE = 'tables.xlsx';


/** Rows a worksheet holds at most, below its header (the XLSX format's limit of 1,048,576 rows). */
export const SHEET_ROWS = 1_048_575;

export async function runExport(dir: string, o: ExportOptions): Promise<string[]> {
  const root = resolve(dir);
  let run: any;
  try {
    run = JSON.parse(await readFile(join(root, 'run.json'), 'utf8'));
  } catch {
    throw new UsageError(`${join(root, 'run.json')}: missing or unreadable; give a folder that quern reduce (or quern merge) wrote`);
  }
  if (o.digits != null && !(Number.isInteger(o.digits) && o.digits >= 1 && o.digits <= 17)) throw new UsageError(`--digits takes a whole number from 1 to 17, got ${o.digits}`);
  // Each table is opened (its columns, row count and run from the Parquet footer) and read a batch at a time as it is written.
  const open = (name: string) => openParquetTable(join(root, `${name}.parquet`), name, o.batchRows ?? BATCH_ROWS);
  const features = await open('features');
  const tables: ExportTable[] = [features];
  if (o.wide) tables.push(await widen(features, run.label_columns ?? []));
  for (const name of Object.keys(SECONDARY_TABLES)) tables.push(await open(name));
  for (const name of RUN_TABLES) if (existsSync(join(root, `${name}.parquet`))) tables.push(await open(name));
  tables.push(await readQualityFlags(root));
  // Every output but trends.parquet, which is kept across runs while what it rests on is unchanged (cache/trends.json).
  const fileOf = (t: ExportTable) => (t.name === 'quality flags' ? 'quality.json' : `${t.name}.parquet`);
  const digest = await readFile(join(root, 'outputs.json'), 'utf8').then((text) => JSON.parse(text) as { run_id?: unknown }, () => null);
  checkOneRun(root, run, [
    ...tables.filter((t) => t.runId !== undefined && t.name !== 'trends').map((t) => ({ file: fileOf(t), runId: t.runId ?? null })),
    ...(digest ? [{ file: 'outputs.json', runId: typeof digest.run_id === 'string' ? digest.run_id : null }] : []),
  ]);
  // Every file of the export is staged, then all are renamed into place together: a failed write leaves the previous export whole.
  const staged: StagedFile[] = [];
  const stage = (file: string) => { const f = new StagedFile(join(root, file)); staged.push(f); return f; };
  let bookFile: StagedFile | null = null;
  try {
    // The spectra (thousands of rows a channel) and any table longer than a worksheet stay in their CSV and Parquet files.
    const sheetRows = o.sheetRows ?? SHEET_ROWS;
    const tooLong = tables.filter((t) => t.name === 'spectra' || t.rowCount > sheetRows);
    // The workbook writer (exceljs) loads only when a workbook is asked for; its sheets follow the tables' order, so one
    // reading of each table feeds its CSV file and its sheet together.
    bookFile = o.to.includes('xlsx') ? new StagedFile(join(root, XLSX_FILE)) : null;
    const book = bookFile ? new (await import('./xlsx.js')).WorkbookStream(bookFile, o.digits ?? null) : null;
    for (const t of tables) {
      const csv = o.to.includes('csv') ? stage(CSV_FILES[t.name]) : null;
      const sheet = book && !tooLong.includes(t) ? book.sheet(t) : null;
      if (!csv && !sheet) continue;
      await csv?.write(csvHead(t.columns, o));
      for await (const rows of t.batches()) {
        if (csv) await csv.write(csvLines(rows, t.columns, o));
        await sheet?.add(rows);
      }
      await csv?.close();
      await sheet?.end();
    }
    if (book) {
      const facts: [string, string][] = [
        ['tool', `quern ${run.version}`], ['run id', run.run_id], ['archive', run.archive], ['started', run.started], ['finished', run.finished],
        ['recordings', `${run.counts.reduced} reduced, ${run.counts.failed} failed, ${run.counts.unmatched} unmatched`],
        ...periodFacts(run),
        ['spec source', run.spec.source], ['spec hash (SHA-256)', run.spec.hash], ['spec', JSON.stringify(run.spec.value, null, 1)],
        ['units', '"[channel unit]" in a header means the unit given in the row\'s unit column'],
        ['caution', 'These numbers support, and do not replace, qualified engineering judgement; the standards and local practice that apply to a test come first.'],
      ];
      for (const t of tooLong) facts.push([`${t.name}`, `not in this workbook (${t.rowCount} rows): read ${t.name}.parquet or ${CSV_FILES[t.name]}`]);
      await book.finish({ rows: facts });
      await bookFile!.close();
      staged.push(bookFile!);
    }
    await commitAll(staged);
    // A CSV of a table this export does not write (trends turned off in the spec since, no --wide this time) would be read as current.
    if (o.to.includes('csv')) {
      const now = new Set(tables.map((t) => t.name));
      for (const [name, file] of Object.entries(CSV_FILES)) if (!now.has(name)) await writing(join(root, file), () => rm(join(root, file), { force: true }));
    }
  } catch (e) {
    throw e instanceof WriteFailed ? new ExportFailed(e.file, e.reason, root, o.to) : e;
  } finally {
    for (const f of new Set([...staged, ...(bookFile ? [bookFile] : [])])) await f.discard();
  }
  return staged.map((f) => f.path);
}

/** "csv,xlsx" → ['csv', 'xlsx']. */
export function parseFormats(text: string | string[]): ExportFormat[] {
  const list = (Array.isArray(text) ? text : [text]).flatMap((t) => t.split(',')).map((t) => t.trim().toLowerCase()).filter(Boolean);
  const bad = list.filter((t) => t !== 'csv' && t !== 'xlsx');
  if (bad.length || !list.length) throw new UsageError(`export formats are csv and xlsx (e.g. csv,xlsx), got "${[text].flat().join(',')}"`);
  return [...new Set(list)] as ExportFormat[];
}
