// Keys a spec once took and no longer does, with what to write instead: an upgrade should not leave a lab guessing.

/** The retired key's place (dotted, array places as `*`) → what replaced it and why. */
export const RETIRED_KEYS: Readonly<Record<string, string>> = {
  'quality.resolution.note_snr_db': 'note_error (a fraction of the figure, default 0.01)',
  'quality.resolution.warn_snr_db': 'warn_error (a fraction of the figure, default 0.05)',
  'quality.resolution.fail_snr_db': 'fail_error (a fraction of the figure, default 0.15)',
};

const WHY: Readonly<Record<string, string>> = {
  'quality.resolution': 'since version 0.4.0 the resolution flag judges the errors the converter\'s step puts on the channel\'s peak and RMS, not a signal-to-noise ratio',
};

const placeOf = (path: readonly (string | number)[]) => path.map((p) => (typeof p === 'number' ? '*' : p)).join('.');
const parentOf = (place: string) => place.slice(0, place.lastIndexOf('.'));

/** What to say of a retired key at `path`, or null when the key was never part of a spec there. */
export function retiredKey(path: readonly (string | number)[]): string | null {
  const place = placeOf(path);
  const instead = RETIRED_KEYS[place];
  if (!instead) return null;
  return `"${path[path.length - 1]}" is retired: ${WHY[parentOf(place)] ?? 'its meaning changed'}; write ${instead} instead`;
}

/**
 * What to say of an unknown key at `path` that a spec once took deeper under the same place (`quality.warn_snr_db` for
 * `quality.resolution.warn_snr_db`): where it belonged, and that it is retired there too; null when none was.
 */
export function retiredBelow(path: readonly (string | number)[]): string | null {
  const place = placeOf(path), key = String(path[path.length - 1]), parent = parentOf(place);
  const found = Object.keys(RETIRED_KEYS).find((r) => r.endsWith(`.${key}`) && r !== place && (parent === '' || r.startsWith(`${parent}.`)));
  if (!found) return null;
  const home = parentOf(found);
  return `"${key}" belonged under ${home}, where it is retired: ${WHY[home] ?? 'its meaning changed'}; write ${RETIRED_KEYS[found]} under ${home} instead`;
}
