// The unit of a power spectral density: the channel's unit squared per hertz, a compound unit in parentheses first.

/** "Pa²/Hz", but "(m/s^2)²/Hz": a square written after a compound unit would square only its last part. */
export const densityUnit = (unit: string): string => `${/^[\p{L}µ°]+$/u.test(unit) ? unit : `(${unit})`}²/Hz`;
