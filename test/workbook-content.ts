// What a workbook shows, read by two independent readers (SheetJS: cells, types, values, number formats; ExcelJS:
// column widths and formats, frozen panes, filters, page setup, fills, fonts, alignment), digested per sheet and aspect.
import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import ExcelJS from 'exceljs';
import * as XLSX from 'xlsx';

const digest = (x: unknown) => createHash('sha256').update(JSON.stringify(x)).digest('hex');

/** Sheet name → aspect → SHA-256 of what the readers give for it; `sheets` lists the sheets in order. */
export async function workbookContent(path: string): Promise<Record<string, Record<string, string> | string[]>> {
  const wb = XLSX.read(readFileSync(path), { cellNF: true });
  const x = new ExcelJS.Workbook();
  await x.xlsx.readFile(path);
  const out: Record<string, Record<string, string> | string[]> = { sheets: wb.SheetNames };
  for (const name of wb.SheetNames) {
    const s = wb.Sheets[name];
    const cells = Object.keys(s).filter((k) => !k.startsWith('!')).sort().map((k) => [k, s[k].t, s[k].v instanceof Date ? s[k].v.toISOString() : s[k].v, s[k].z ?? null]);
    const ws = x.getWorksheet(name)!;
    const styled = (what: 'fill' | 'font' | 'alignment') => {
      const found: unknown[] = [];
      ws.eachRow((r, i) => r.eachCell((c, j) => { if (c[what]) found.push([i, j, c[what]]); }));
      return found;
    };
    out[name] = Object.fromEntries(Object.entries({
      ref: s['!ref'], cells, views: ws.views, autoFilter: ws.autoFilter, widths: ws.columns?.map((c) => c.width),
      columnFormats: ws.columns?.map((c) => c.style?.numFmt), pageSetup: ws.pageSetup, fills: styled('fill'), fonts: styled('font'), alignment: styled('alignment'),
    }).map(([k, v]) => [k, digest(v ?? null)]));
  }
  return out;
}
