// Medians by quickselect, reordering the values in place.

// k-th smallest by quickselect (Hoare 1961, Algorithm 65 FIND), reordering v in place: linear time on average.
function select(v: Float64Array, k: number): number {
  let lo = 0, hi = v.length - 1;
  while (lo < hi) {
    const pivot = v[(lo + hi) >> 1];
    let i = lo, j = hi;
    while (i <= j) {
      while (v[i] < pivot) i++;
      while (v[j] > pivot) j--;
      if (i <= j) { const t = v[i]; v[i] = v[j]; v[j] = t; i++; j--; }
    }
    if (k <= j) hi = j; else if (k >= i) lo = i; else return v[k];
  }
  return v[k];
}

/** Median of the values (reorders them). */
export function median(v: Float64Array): number {
  const m = v.length >> 1;
  if (v.length % 2) return select(v, m);
  const upper = select(v, m);
  let lower = -Infinity;
  for (let i = 0; i < m; i++) if (v[i] > lower) lower = v[i]; // after selecting m, everything before it is ≤ v[m]
  return (lower + upper) / 2;
}
