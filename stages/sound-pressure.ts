// Sound pressure levels in dB re 20 µPa, the reference for sound in air (IEC 61672-1; ISO 1683), from channels in pressure units.

/** Reference sound pressure p0, Pa. */
export const P0_PA = 20e-6;

/** The unit the level columns are in. */
export const LEVEL_UNIT = 'dB re 20 µPa';

const TO_PA: Record<string, number> = { Pa: 1, mPa: 1e-3, 'µPa': 1e-6, uPa: 1e-6, hPa: 100, kPa: 1000 };

/** The pressure units quern converts to pascals, as a declaration writes them. */
export const PRESSURE_UNITS: readonly string[] = Object.keys(TO_PA);

/** Pascals per unit of a channel, or undefined for a unit that is not a pressure quern converts. */
export const pascalsPer = (unit: string): number | undefined => TO_PA[unit.trim()];

/** L = 10·lg(p²/p0²) of a mean square in Pa²; null for silence. */
export const levelDb = (meanSquarePa2: number): number | null => (meanSquarePa2 > 0 ? 10 * Math.log10(meanSquarePa2 / (P0_PA * P0_PA)) : null);

/** Says once why a sound-pressure channel gets no levels. */
export const noLevels = (name: string, unit: string) => `${name}: unit "${unit}" is not a pressure unit quern converts to pascals (Pa, mPa, µPa, hPa, kPa); sound levels left empty`;
