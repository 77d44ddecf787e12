// Which quantities the spec's sections and flags select channels by, so that a declared quantity close to one of them
// but not it (a slip of the keyboard) is named rather than silently left out of velocity, envelope, sound levels, rainflow.
import { ACCELERATION_UNITS, metresPerSecond2 } from '../../stages/acceleration-units.js';
import { activeStages } from '../../stages/index.js';
import { thresholdsOf } from '../../stages/quality/flag.js';
import { pascalsPer, PRESSURE_UNITS } from '../../stages/sound-pressure.js';
import type { ReductionSpec } from '../../spec/reduction.js';
import { didYouMean, likelyMeant } from './nearest-names.js';

/** Per quantity, what selects channels of it: spec sections by name, or a flag. */
export type QuantityUses = ReadonlyMap<string, readonly string[]>;

/** Nothing selects by quantity: no declared quantity is judged. */
export const NO_QUANTITY_USES: QuantityUses = new Map();

/** The quantities the spec's sections (`only: { quantities }`, with their defaults), the stages' own tests, the offset flag and the resolution flag's static readings select. */
export function quantityUses(spec: ReductionSpec): QuantityUses {
  const uses = new Map<string, string[]>();
  const add = (quantity: string, what: string) => { const u = uses.get(quantity) ?? uses.set(quantity, []).get(quantity)!; if (!u.includes(what)) u.push(what); };
  for (const s of activeStages(spec)) for (const q of s.only?.quantities ?? []) add(q, s.definition.group);
  // Velocity integrates acceleration alone, and band levels in dB need a sound pressure, whatever `only` lets through.
  if (spec.velocity_bands) add('acceleration', 'velocity_bands');
  const octaves = spec.octave_bands == null ? [] : Array.isArray(spec.octave_bands) ? spec.octave_bands : [spec.octave_bands];
  if (octaves.some((o) => o.levels_db)) add('sound_pressure', 'octave_bands levels_db');
  for (const q of thresholdsOf(spec.quality).offset.quantities) add(q, 'the offset flag');
  for (const q of thresholdsOf(spec.quality).resolution.static_quantities) add(q, 'the resolution flag');
  return uses;
}

/** A declared channel, where it is declared, and whether its unit was written or defaulted. */
export interface DeclaredChannel { group: string; channel: string; quantity: string | undefined; unit: string | undefined; line: number; file: string }

/** A quantity near one the spec selects by but not it: the channel would be left out of what selects that one. */
export function quantityNote(c: DeclaredChannel, uses: QuantityUses): string | null {
  if (c.quantity == null || uses.has(c.quantity)) return null;
  const meant = likelyMeant(c.quantity, [...uses.keys()], 1);
  if (!meant.length) return null;
  return `quantity "${c.quantity}" of channel ${c.channel} (group ${c.group}, ${c.file} line ${c.line}) is not one quern knows; ${didYouMean(meant)} Figures and flags that select ${meant[0]} (${uses.get(meant[0])!.join(', ')}) leave it out`;
}

/** Units quern converts for the figures of a quantity, and which figures need them. */
const UNITS_FOR: Record<string, { units: readonly string[]; converts: (unit: string) => number | undefined; kind: string; needs: string[]; left: string }> = {
  acceleration: { units: ACCELERATION_UNITS, converts: metresPerSecond2, kind: 'an acceleration unit quern converts', needs: ['velocity_bands'], left: 'velocity is left empty' },
  sound_pressure: { units: PRESSURE_UNITS, converts: pascalsPer, kind: 'a pressure unit quern converts to pascals', needs: ['sound_level', 'octave_bands levels_db'], left: 'sound levels are left empty' },
};

/** A unit the figures that select its quantity cannot convert (`pa` for Pa, m/s for m/s^2): they would be left empty. */
export function unitNote(c: DeclaredChannel, uses: QuantityUses): string | null {
  const u = c.quantity != null ? UNITS_FOR[c.quantity] : undefined;
  if (!u || !uses.get(c.quantity!)?.some((w) => u.needs.includes(w))) return null;
  const unit = c.unit ?? 'FS';
  if (u.converts(unit) !== undefined) return null;
  const said = c.unit == null ? 'declares no unit (its values stay in FS)' : `has unit "${unit}", not ${u.kind} (${u.units.join(', ')})`;
  const meant = c.unit == null ? '' : didYouMean(likelyMeant(unit, u.units, 1));
  return `${c.quantity} channel ${c.channel} (group ${c.group}, ${c.file} line ${c.line}) ${said}; ${meant ? `${meant} ${u.left[0].toUpperCase()}${u.left.slice(1)}` : u.left} for it`;
}
