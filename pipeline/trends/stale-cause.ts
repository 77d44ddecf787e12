// Why a stored figure does not compare with today's: its group's options differ, its group's declaration differs, or another
// version of quern computed it. Kept as bits per point and feature, counted and told in words.

export const StaleCause = { version: 4, options: 1, declaration: 2 } as const;
export type StaleCauseName = keyof typeof StaleCause;
/** The causes in the order they are told. */
export const STALE_CAUSES = Object.keys(StaleCause) as StaleCauseName[];

/** The causes a point's bits hold. */
export const causesOf = (bits: number): StaleCauseName[] => STALE_CAUSES.filter((c) => bits & StaleCause[c]);

const WORDS: Record<StaleCauseName, string> = { version: 'by another version of quern', options: 'under other spec options', declaration: 'under another declaration of their group' };

/** "by another version of quern", or "by another version of quern (3) or under other spec options (2)" where causes differ; null when none is counted. */
export function storedText(counts: Partial<Record<StaleCauseName, number>>): string | null {
  const causes = STALE_CAUSES.filter((c) => (counts[c] ?? 0) > 0);
  if (!causes.length) return null;
  if (causes.length === 1) return WORDS[causes[0]];
  const named = causes.map((c) => `${WORDS[c]} (${counts[c]})`);
  return `${named.slice(0, -1).join(', ')} or ${named.at(-1)}`;
}
