// One XLSX workbook: a sheet per table and one that states the run; frozen headers, filters, units, severities in colour.
// Written with the workbook writer's streaming mode: each row is committed as it comes, so no table is held whole.
import { Writable } from 'node:stream';
import ExcelJS from 'exceljs';
import { COLOURS } from '../outputs/colours.js';
import type { StagedFile } from '../outputs/staged.js';
import { headerText, neutralise, numberText } from './csv.js';
import type { Cell, ExportColumn } from './tables.js';

// Light tints of the report's own palette, so dark text stays readable on them.
const FILLS: Record<string, string> = { ok: 'FFD9ECE8', note: 'FFE1E7EE', warn: 'FFF5E6C4', fail: 'FFF1D3CD' };

// A start shows its milliseconds where it has them (the tables' timestamp unit); a whole second shows none.
const WHOLE_SECONDS = 'yyyy-mm-dd hh:mm:ss', MILLISECONDS = 'yyyy-mm-dd hh:mm:ss.000';

/** Rows sampled for the columns' widths, from the top of the table. */
const WIDTH_SAMPLE = 200;

type Sheet = ExcelJS.Worksheet;
/** The columns of a table as a sheet shows them: its name and columns. */
export interface SheetTable { name: string; columns: ExportColumn[] }

function startSheet(wb: ExcelJS.stream.xlsx.WorkbookWriter, t: SheetTable, sample: Cell[][]): Sheet {
  const ws = wb.addWorksheet(t.name, {
    views: [{ state: 'frozen', ySplit: 1 }],
    // Printed (or rendered to PDF) across, with the header row on every page.
    pageSetup: { orientation: 'landscape', paperSize: 9, printTitlesRow: '1:1', margins: { left: 0.4, right: 0.4, top: 0.5, bottom: 0.5, header: 0.2, footer: 0.2 } },
  });
  // Wide enough for the header and for text values (sampled), within reason.
  const widest = (i: number) => sample.slice(0, WIDTH_SAMPLE).reduce((w, r) => Math.max(w, t.columns[i].kind === 'text' && r[i] != null ? String(r[i]).length : t.columns[i].kind === 'time' ? 23 : 10), 0);
  ws.columns = t.columns.map((c, i) => ({
    header: neutralise(headerText(c)),
    width: Math.min(44, Math.max(9, headerText(c).length + 2, widest(i) + 1)),
    style: { numFmt: c.kind === 'time' ? WHOLE_SECONDS : c.kind === 'integer' ? '0' : c.kind === 'number' ? 'General' : '@' },
  }));
  const header = ws.getRow(1);
  header.font = { bold: true, color: { argb: 'FFFFFFFF' } };
  header.fill = { type: 'pattern', pattern: 'solid', fgColor: { argb: `FF${COLOURS.ok.slice(1).toUpperCase()}` } };
  ws.autoFilter = { from: { row: 1, column: 1 }, to: { row: 1, column: t.columns.length } };
  header.commit();
  return ws;
}

function addRows(ws: Sheet, t: SheetTable, rows: Cell[][], digits: number | null): void {
  const timeColumns = t.columns.map((c, i) => (c.kind === 'time' ? i : -1)).filter((i) => i >= 0);
  const severityColumns = t.columns.map((c, i) => (c.name === 'quality' || c.name === 'severity' || c.name.endsWith('.quality') ? i : -1)).filter((i) => i >= 0);
  for (const row of rows) {
    const r = ws.addRow(row.map((v, i) => {
      if (v == null) return null;
      const kind = t.columns[i].kind;
      if (kind === 'number') return Number(numberText(v as number, t.columns[i].exact ? null : digits));
      if (kind === 'integer') return Number(v);
      if (kind === 'time') return new Date(v as number);
      return neutralise(String(v));
    }));
    for (const i of timeColumns) if (row[i] != null && Number(row[i]) % 1000 !== 0) r.getCell(i + 1).numFmt = MILLISECONDS;
    for (const i of severityColumns) {
      const fill = FILLS[String(row[i])];
      if (fill) r.getCell(i + 1).fill = { type: 'pattern', pattern: 'solid', fgColor: { argb: fill } };
    }
    // Committed at once: the row goes out to the file and its cells are freed.
    r.commit();
  }
}

export interface RunFacts { rows: [string, string][] }

/** A sheet being written: rows are added in batches; its columns wait for the first rows, whose text sets their widths. */
export interface SheetWriter { add(rows: Cell[][]): Promise<void>; end(): Promise<void> }

/** A workbook written into a staged file as its sheets' rows come, one sheet after another, the run's sheet last. */
export class WorkbookStream {
  private readonly wb: ExcelJS.stream.xlsx.WorkbookWriter;
  private failure: Error | null = null;
  private readonly failed: Promise<never>;

  constructor(file: StagedFile, private readonly digits: number | null = null) {
    let fail: (e: Error) => void = () => {};
    this.failed = new Promise<never>((_, reject) => { fail = reject; });
    this.failed.catch(() => {}); // seen where it is awaited; unawaited when a write fails after the workbook was given up
    // The staged file's own write: a full disk or a folder in the way is a WriteFailed naming the file.
    const out = new Writable({ write: (chunk: Buffer, _enc, done) => { file.write(chunk).then(() => done(), done); } });
    out.on('error', (e) => { this.failure ??= e; fail(e); });
    // Shared strings, as the whole-workbook writer wrote them: a table repeats its few names (recording, channel, unit) on every row.
    this.wb = new ExcelJS.stream.xlsx.WorkbookWriter({ stream: out, useStyles: true, useSharedStrings: true });
    this.wb.creator = 'quern';
    this.wb.created = new Date(0); // a fixed date keeps the workbook's metadata a function of its content
  }

  /** Starts the sheet of a table; the one before must have ended. */
  sheet(t: SheetTable): SheetWriter {
    let ws: Sheet | null = null, sample: Cell[][] = [];
    const start = () => { ws ??= startSheet(this.wb, t, sample); addRows(ws, t, sample, this.digits); sample = []; };
    return {
      add: async (rows) => {
        this.check();
        if (!ws) { sample.push(...rows); if (sample.length >= WIDTH_SAMPLE) start(); } else addRows(ws, t, rows, this.digits);
        // Lets the zip writer take the rows before the next batch is read.
        await new Promise((resolve) => setImmediate(resolve));
      },
      end: async () => { this.check(); if (!ws) start(); ws!.commit(); },
    };
  }

  /** Adds the run's sheet and closes the workbook; resolves once every byte has gone to the staged file. */
  async finish(run: RunFacts): Promise<void> {
    this.check();
    const ws = this.wb.addWorksheet('run', { views: [{ state: 'frozen', ySplit: 1 }] });
    ws.columns = [{ header: 'about this run', width: 24 }, { header: 'value', width: 100 }];
    ws.getRow(1).font = { bold: true };
    for (const [k, v] of run.rows) ws.addRow([neutralise(k), neutralise(v)]).getCell(2).alignment = { wrapText: true, vertical: 'top' };
    await Promise.race([this.wb.commit(), this.failed]);
  }

  private check(): void { if (this.failure) throw this.failure; }
}
