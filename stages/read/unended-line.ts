// A text recording whose last line has no line end may have been cut short (a copy or a capture stopped part-way): its last
// value cut mid-number (-0.14 for -0.144264), its time mid-digit, which would read as samples without a word otherwise.
// RFC 4180 (2.2) lets the last record go without a line break, so only a last line that also shows a sign of the cut is
// left out of the figures, with a note.

/** The last data line as read: its line number and cells, and the data line before it (null when it is the first). */
export interface LastLine { line: number; text: string; cells: string[]; before: string[] | null; time: number; timeBefore: number }

/**
 * The signs that a last line without a line end was cut: a time that steps back or is printed shorter than the line before's,
 * fewer fields than the header's, its last cell printed shorter than the same column's on the line before; the note saying
 * them (the line is then left out), or null when there are none.
 */
export function unendedLineNote(last: LastLine, names: string[], timeColumn: number): string | null {
  const signs: string[] = [];
  const cell = (cells: string[] | null, c: number) => (cells?.[c] ?? '').trim();
  const shorter = (c: number) => last.before != null && cell(last.cells, c).length < cell(last.before, c).length;
  if (timeColumn >= 0) {
    if (!Number.isFinite(last.time)) signs.push(`its time "${shortened(cell(last.cells, timeColumn))}" is no time`);
    else if (last.time < last.timeBefore) signs.push(`its time ${cell(last.cells, timeColumn)} steps back from ${cell(last.before, timeColumn)} on the line before`);
    else if (shorter(timeColumn)) signs.push(`its time "${cell(last.cells, timeColumn)}" is printed shorter than the line before's "${cell(last.before, timeColumn)}"`);
  }
  if (last.cells.length < names.length) signs.push(`it holds ${last.cells.length} of the header's ${names.length} fields`);
  const end = Math.min(last.cells.length, names.length) - 1;
  if (end >= 0 && end !== timeColumn && shorter(end)) signs.push(`its "${names[end]}" value "${cell(last.cells, end)}" is printed shorter than the line before's "${cell(last.before, end)}"`);
  if (!signs.length) return null;
  return `line ${last.line}, the last ("${shortened(last.text)}"), has no line end and shows a cut (a copy or capture stopped part-way): ${signs.join(', and ')}; it is left out of the figures: if it is whole, end the file with a line end`;
}

/** A line's text as a note quotes it: at most 40 characters. */
const shortened = (text: string, most = 40) => (text.length <= most ? text : `${text.slice(0, most - 1)}…`);
