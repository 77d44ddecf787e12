// The acceleration units a declaration may use, in one table for every stage that converts them.

/** Standard gravity, m/s² (ISO 80000-3). */
export const STANDARD_GRAVITY = 9.80665;

/** m/s² per declared acceleration unit; g is standard gravity. */
const TO_M_PER_S2: Record<string, number> = { 'm/s^2': 1, 'm/s²': 1, 'm/s2': 1, 'mm/s^2': 1e-3, 'mm/s²': 1e-3, g: STANDARD_GRAVITY, gn: STANDARD_GRAVITY, 'g_n': STANDARD_GRAVITY };

/** The acceleration units quern converts, as a declaration writes them. */
export const ACCELERATION_UNITS: readonly string[] = Object.keys(TO_M_PER_S2);

/** m/s² per one of `unit`, or undefined when it is no acceleration unit quern converts. */
export const metresPerSecond2 = (unit: string): number | undefined => TO_M_PER_S2[unit.trim()];
