// The options that shape spreadsheet copies (--bom, --decimal-comma, --digits, --wide), judged as a command starts: a
// refusal after a whole night's run, or an option silently doing nothing without --export, would fail the lab's trust.
import { UsageError } from './declare/yaml-file.js';

/** The export options as the command line gives them (an option given twice arrives as a list). */
export interface ExportOptionsGiven { export?: string | string[]; bom?: boolean; decimalComma?: boolean; digits?: number | number[]; wide?: boolean }

/** Significant digits a double can carry: 17 reads any double back exactly (IEEE 754-2008, 5.12.2; from memory). */
export const MAX_DIGITS = 17;

/** --digits refused unless it is a whole number from 1 to 17, with the wording `quern export` uses. */
export function checkDigits(digits: number | null | undefined): void {
  if (digits != null && !(Number.isInteger(digits) && digits >= 1 && digits <= MAX_DIGITS)) throw new UsageError(`--digits takes a whole number from 1 to ${MAX_DIGITS}, got ${digits}`);
}

/**
 * The export options of reduce and merge, before any work: each valid, given once, and none given without --export (they
 * would be ignored; `quern export` takes them with --to).
 */
export function checkExportOptions(a: ExportOptionsGiven): void {
  if (Array.isArray(a.digits)) throw new UsageError(`--digits is given ${a.digits.length} times (${a.digits.join(', ')}); give it once`);
  const given = [a.bom ? '--bom' : null, a.decimalComma ? '--decimal-comma' : null, a.digits != null ? `--digits ${a.digits}` : null, a.wide ? '--wide' : null].filter((o): o is string => o != null);
  if (given.length && !a.export) {
    throw new UsageError(`${given.join(', ')} ${given.length === 1 ? 'shapes' : 'shape'} the spreadsheet copies that --export writes, and no --export is given: add --export csv (or xlsx, csv,xlsx), or drop ${given.length === 1 ? 'it' : 'them'}`);
  }
  checkDigits(a.digits);
}
