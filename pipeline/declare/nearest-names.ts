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
