// The names nearest a mistyped one, so a refusal can say what was probably meant.

/** Levenshtein distance: fewest single-character insertions, deletions and substitutions (Wagner–Fischer, 1974). */
export function editDistance(a: string, b: string): number {
  let row = Array.from({ length: b.length + 1 }, (_, j) => j);
  for (let i = 1; i <= a.length; i++) {
    const next = [i];
    for (let j = 1; j <= b.length; j++) next[j] = Math.min(row[j] + 1, next[j - 1] + 1, row[j - 1] + (a[i - 1] === b[j - 1] ? 0 : 1));
    row = next;
  }
  return row[b.length];
}

/** Up to `count` names closest to `word`, nearest first (ties in the names' own order). */
export function nearestNames(word: string, names: readonly string[], count = 3): string[] {
  const distinct = [...new Set(names)];
  return distinct.map((name, i) => ({ name, i, d: editDistance(word, name) })).sort((x, y) => x.d - y.d || x.i - y.i).slice(0, count).map((x) => x.name);
}

/** Edits allowed for a slip, by the longer name's length (see likelyMeant). */
const slipBound = (longer: number) => (longer >= 4 ? Math.max(2, Math.floor(longer / 3)) : 1);

/**
 * The names `word` is likely a slip for, nearest first: those within a third of the longer one's length in edits, and at
 * least two from four letters up (one below), letter case aside. Our choice of bound: it takes transposed and dropped
 * letters ("onyl", "accelaration"), not another word of the trade ("strain" for "stress" is three).
 */
export function likelyMeant(word: string, names: readonly string[], count = 2): string[] {
  const lower = word.toLowerCase();
  const near = [...new Set(names)].map((name, i) => ({ name, i, d: editDistance(lower, name.toLowerCase()) }));
  return near.filter((x) => x.name !== word && x.d <= slipBound(Math.max(word.length, x.name.length))).sort((x, y) => x.d - y.d || x.i - y.i).slice(0, count).map((x) => x.name);
}

/** "did you mean a?" or "did you mean a or b?" for a refusal; empty when nothing is near. */
export const didYouMean = (meant: readonly string[]) => (meant.length ? `did you mean ${meant.join(' or ')}?` : '');
