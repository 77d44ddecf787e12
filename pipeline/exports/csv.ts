// CSV per table (RFC 4180: quoted text, CRLF line ends, UTF-8), safe to open in a spreadsheet.
import type { Cell, ExportColumn } from './tables.js';

export interface CsvOptions {
  /** Start with a UTF-8 byte-order mark, which some spreadsheets need to take the file as UTF-8. */
  bom?: boolean;
  /** Semicolon-separated with decimal commas, as spreadsheets in many locales expect. */
  decimalComma?: boolean;
  /** Round figures to this many significant digits (keys, axes, settings and counts stay whole); full double precision when omitted. */
  digits?: number | null;
}

// Cells a spreadsheet would run as a formula start with one of these (OWASP, "CSV Injection"): a leading apostrophe makes them text.
const FORMULA_START = /^[=+\-@\t\r]/;
// A plain signed number (a label of -12.5) runs as nothing but itself, so it keeps its sign without the apostrophe.
const PLAIN_NUMBER = /^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$/;
export const neutralise = (s: string) => (FORMULA_START.test(s) && !PLAIN_NUMBER.test(s) ? `'${s}` : s);

/** A number as text that reads back as the same double (shortest round-trip form), or rounded to `digits`. */
export const numberText = (v: number, digits: number | null | undefined) => String(digits ? Number(v.toPrecision(digits)) : v);

/**
 * The header cell: name and unit; "[unit]" stands for the channel's own unit, and a unit that is itself a bracketed
 * placeholder ("[feature unit]") names the row's `unit` column without a second pair of brackets.
 */
export function headerText(c: ExportColumn): string {
  if (!c.unit || c.unit === '1') return c.name;
  const unit = c.unit.replace('[unit]^2', 'channel unit²').replace('[unit]', 'channel unit');
  return `${c.name} [${/^\[[^\]]*\]$/.test(unit) ? unit.slice(1, -1) : unit}]`;
}

function cellText(v: Cell, c: ExportColumn, o: CsvOptions): string {
  if (v == null) return '';
  if (c.kind === 'number') { const t = numberText(v as number, c.exact ? null : o.digits); return o.decimalComma ? t.replace('.', ',') : t; }
  if (c.kind === 'integer') return String(v);
  const text = c.kind === 'time' ? new Date(v as number).toISOString() : neutralise(String(v));
  return `"${text.replace(/"/g, '""')}"`;
}

/** The file's start: the byte-order mark when asked for, and the header row, each line ended by CRLF. */
export function csvHead(columns: ExportColumn[], o: CsvOptions = {}): string {
  const d = o.decimalComma ? ';' : ',';
  return (o.bom ? '\uFEFF' : '') + columns.map((c) => `"${neutralise(headerText(c)).replace(/"/g, '""')}"`).join(d) + '\r\n';
}

/** A batch of rows as CSV lines, each ended by CRLF: written as they are read, so a table is never held whole. */
export function csvLines(rows: Cell[][], columns: ExportColumn[], o: CsvOptions = {}): string {
  const d = o.decimalComma ? ';' : ',';
  let text = '';
  for (const row of rows) text += row.map((v, i) => cellText(v, columns[i], o)).join(d) + '\r\n';
  return text;
}
