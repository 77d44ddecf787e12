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

/** What to say of a retired key at `path`, or null when the key was never part of a spec. */
export function retiredKey(path: readonly (string | number)[]): string | null {
  const place = path.map((p) => (typeof p === 'number' ? '*' : p)).join('.');
  const instead = RETIRED_KEYS[place];
  if (!instead) return null;
  const parent = place.slice(0, place.lastIndexOf('.'));
  return `"${path[path.length - 1]}" is retired: ${WHY[parent] ?? 'its meaning changed'}; write ${instead} instead`;
}
