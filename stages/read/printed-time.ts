// A time column's printed times as whole units of their last printed digit, counted from the first row: exact integers,
// so that steps rounded to the print resolution are compared without the error of subtracting parsed decimals.
import { isoTimeMs } from './iso-time.js';

const NUMBER = /^([+-]?)(\d*)(?:[.,](\d*))?$/;
const ISO_FRACTION = /^(.*:\d{2})[.,](\d+)(.*)$/;

/** One printed time in units of 10^-printed of its own unit (seconds, or the header's unit), or null where it is not plain decimal. */
function unitsOf(text: string, printed: number): bigint | null {
  const t = text.trim(), scale = 10n ** BigInt(printed);
  const n = t.match(NUMBER);
  if (n && (n[2] !== '' || (n[3] ?? '') !== '')) {
    const frac = n[3] ?? '';
    if (frac.length > printed) return null;
    const whole = BigInt(n[2] || '0') * scale + BigInt(frac.padEnd(printed, '0') || '0');
    return n[1] === '-' ? -whole : whole;
  }
  // An ISO 8601 date-time: its whole seconds from isoTimeMs (whole milliseconds, exact), its fraction digit by digit.
  const f = t.match(ISO_FRACTION);
  const ms = isoTimeMs(f ? f[1] + f[3] : t);
  if (!Number.isFinite(ms)) return null;
  const frac = f ? f[2] : '';
  if (frac.length > printed) return null;
  return BigInt(ms / 1000) * scale + BigInt(frac.padEnd(printed, '0') || '0');
}

/** The printed times as units of their last printed digit from the first, or null where one is not plain decimal (1e-3). */
export function printedUnits(cells: string[], printed: number): Float64Array | null {
  const first = cells.length ? unitsOf(cells[0], printed) : null;
  if (first == null) return null;
  const out = new Float64Array(cells.length);
  for (let i = 1; i < cells.length; i++) {
    const u = unitsOf(cells[i], printed);
    if (u == null) return null;
    out[i] = Number(u - first);
  }
  return out;
}
