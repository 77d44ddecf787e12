// Medians by selection, reordering the values in place.

const swap = (v: Float64Array, i: number, j: number) => { const t = v[i]; v[i] = v[j]; v[j] = t; };

// k-th smallest by Floyd & Rivest's SELECT (Comm. ACM 18(3), 1975, Algorithm 489), reordering v in place so that
// v[left … k) ≤ v[k] ≤ v(k … right]: a partition around a pivot chosen from a small sample, about 1.5·n comparisons
// for a median (Hoare's FIND takes about 3.4·n).
function select(v: Float64Array, k: number, left = 0, right = v.length - 1): number {
  while (right > left) {
    if (right - left > 600) {
      // Narrow to a sample range that holds the k-th smallest with high probability, and select within it first.
      const n = right - left + 1, m = k - left + 1, z = Math.log(n), s = 0.5 * Math.exp((2 * z) / 3);
      const sd = 0.5 * Math.sqrt((z * s * (n - s)) / n) * (m - n / 2 < 0 ? -1 : 1);
      select(v, k, Math.max(left, Math.floor(k - (m * s) / n + sd)), Math.min(right, Math.floor(k + ((n - m) * s) / n + sd)));
    }
    const t = v[k];
    let i = left, j = right;
    swap(v, left, k);
    if (v[right] > t) swap(v, left, right);
    while (i < j) {
      swap(v, i, j);
      i++; j--;
      while (v[i] < t) i++;
      while (v[j] > t) j--;
    }
    if (v[left] === t) swap(v, left, j);
    else { j++; swap(v, j, right); }
    if (j <= k) left = j + 1;
    if (k <= j) right = j - 1;
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
