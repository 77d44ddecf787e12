// One notation for the report's numbers, in its tables and on its charts' axes: written out between 0.001 and 10⁶, with a
// power of ten outside it as the charts' labels write it (1.234e-7, 2e+6), never a signed zero.

/** `v` to four significant digits, plainly or with an exponent, without trailing zeros. */
export function plainNumber(v: number, digits = 4): string {
  if (!Number.isFinite(v)) return String(v);
  if (v === 0) return '0';
  const a = Math.abs(v);
  return a >= 1e-3 && a < 1e6 ? String(Number(v.toPrecision(digits))) : v.toExponential(digits - 1).replace(/\.?0+e/, 'e');
}

/** The same rule for Vega's axis labels: its own label inside the plain range, a power of ten outside it (a label a log axis leaves blank stays blank). */
export const AXIS_LABELS = 'datum.label && datum.value != 0 && (abs(datum.value) < 1e-3 || abs(datum.value) >= 1e6) ? format(datum.value, \'.3~e\') : datum.label';
