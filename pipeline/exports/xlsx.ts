// One XLSX workbook: a sheet per table and one that states the run; frozen headers, filters, units, severities in colour.
import ExcelJS from 'exceljs';
import { COLOURS } from '../outputs/colours.js';
import { headerText, neutralise, numberText } from './csv.js';
import type { ExportTable } from './tables.js';

// Light tints of the report's own palette, so dark text stays readable on them.
const FILLS: Record<string, string> = { ok: 'FFD9ECE8', note: 'FFE1E7EE', warn: 'FFF5E6C4', fail: 'FFF1D3CD' };

// A start shows its milliseconds where it has them (the tables' timestamp unit); a whole second shows none.
const WHOLE_SECONDS = 'yyyy-mm-dd hh:mm:ss', MILLISECONDS = 'yyyy-mm-dd hh:mm:ss.000';

function addSheet(wb: ExcelJS.Workbook, t: ExportTable, digits: number | null): void {
  const ws = wb.addWorksheet(t.name, {
    views: [{ state: 'frozen', ySplit: 1 }],
    // Printed (or rendered to PDF) across, with the header row on every page.
    pageSetup: { orientation: 'landscape', paperSize: 9, printTitlesRow: '1:1', margins: { left: 0.4, right: 0.4, top: 0.5, bottom: 0.5, header: 0.2, footer: 0.2 } },
  });
  // Wide enough for the header and for text values (sampled), within reason.
  const widest = (i: number) => t.rows.slice(0, 200).reduce((w, r) => Math.max(w, t.columns[i].kind === 'text' && r[i] != null ? String(r[i]).length : t.columns[i].kind === 'time' ? 23 : 10), 0);
  ws.columns = t.columns.map((c, i) => ({
    header: neutralise(headerText(c)),
    width: Math.min(44, Math.max(9, headerText(c).length + 2, widest(i) + 1)),
    style: { numFmt: c.kind === 'time' ? WHOLE_SECONDS : c.kind === 'integer' ? '0' : c.kind === 'number' ? 'General' : '@' },
  }));
  const timeColumns = t.columns.map((c, i) => (c.kind === 'time' ? i : -1)).filter((i) => i >= 0);
  const severityColumns = t.columns.map((c, i) => (c.name === 'quality' || c.name === 'severity' || c.name.endsWith('.quality') ? i : -1)).filter((i) => i >= 0);
  for (const row of t.rows) {
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
  }
  const header = ws.getRow(1);
  header.font = { bold: true, color: { argb: 'FFFFFFFF' } };
  header.fill = { type: 'pattern', pattern: 'solid', fgColor: { argb: `FF${COLOURS.ok.slice(1).toUpperCase()}` } };
  ws.autoFilter = { from: { row: 1, column: 1 }, to: { row: 1, column: t.columns.length } };
}

export interface RunFacts { rows: [string, string][] }

export async function toXlsx(tables: ExportTable[], run: RunFacts, { digits = null as number | null } = {}): Promise<Uint8Array> {
  const wb = new ExcelJS.Workbook();
  wb.creator = 'quern';
  wb.created = new Date(0); // a fixed date keeps the workbook's bytes a function of its content
  for (const t of tables) addSheet(wb, t, digits);
  const ws = wb.addWorksheet('run', { views: [{ state: 'frozen', ySplit: 1 }] });
  ws.columns = [{ header: 'about this run', width: 24 }, { header: 'value', width: 100 }];
  for (const [k, v] of run.rows) ws.addRow([neutralise(k), neutralise(v)]).getCell(2).alignment = { wrapText: true, vertical: 'top' };
  ws.getRow(1).font = { bold: true };
  return new Uint8Array(await wb.xlsx.writeBuffer());
}
