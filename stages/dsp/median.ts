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

/** Below this many values the plain selection is as quick. */
const BUCKETED = 2048;
const BUCKETS = 512;

/** Bins of the median of many values: a caller taking many medians may pass its own (any contents) to `median`. */
export const medianBins = () => new Int32Array(2 * BUCKETS);

/** Median of the values (may reorder them); `bins` is scratch. */
export function median(v: Float64Array, bins: Int32Array = medianBins()): number {
  if (v.length >= BUCKETED) { const m = bucketedMedian(v, bins); if (m !== null) return m; }
  return selectedMedian(v);
}

function selectedMedian(v: Float64Array): number {
  const m = v.length >> 1;
  if (v.length % 2) return select(v, m);
  const upper = select(v, m);
  let lower = -Infinity;
  for (let i = 0; i < m; i++) if (v[i] > lower) lower = v[i]; // after selecting m, everything before it is ≤ v[m]
  return (lower + upper) / 2;
}

// Median by distributive partitioning (Allison & Noga, Selection by distributive partitioning, Inf. Proc. Letters 11(1),
// 1980): values binned by a monotone map over [min, max] in straight passes without data-dependent branches, then the
// plain selection within the one bin holding the median (its values copied out, v left as it is), so the same order
// statistics, the same median. null when a value is not a number, is infinite, or all are equal.
function bucketedMedian(v: Float64Array, counts: Int32Array): number | null {
  const n = v.length, m = n >> 1;
  let lo = Infinity, hi = -Infinity, missing = false;
  for (let i = 0; i < n; i++) { const x = v[i]; if (x < lo) lo = x; if (x > hi) hi = x; if (x !== x) missing = true; }
  const span = hi - lo;
  if (missing || !(span > 0 && span < Infinity)) return null;
  const scale = BUCKETS / span, top = BUCKETS - 1;
  counts.fill(0);
  // The same expression everywhere, so a value always falls in the same bin (x − lo ≥ 0, so truncation is the floor);
  // monotone, so bins keep the values' order. Two tallies, even and odd places, so that neighbours in one bin do not wait
  // on each other's count.
  for (let i = 0; i + 1 < n; i += 2) {
    const b = ((v[i] - lo) * scale) | 0, d = ((v[i + 1] - lo) * scale) | 0;
    counts[b < top ? b : top]++; counts[BUCKETS + (d < top ? d : top)]++;
  }
  if (n % 2) { const b = ((v[n - 1] - lo) * scale) | 0; counts[b < top ? b : top]++; }
  for (let b = 0; b < BUCKETS; b++) counts[b] += counts[BUCKETS + b];
  let below = 0, bin = 0;
  while (below + counts[bin] <= m) below += counts[bin++];
  // The bin's values copied out (one spare place, so that every value may be written and only the bin's counted).
  const part = new Float64Array(counts[bin] + 1);
  let c = 0;
  for (let i = 0; i < n; i++) {
    const x = v[i], b = ((x - lo) * scale) | 0;
    part[c] = x; c += (b < top ? b : top) === bin ? 1 : 0;
  }
  const inBin = part.subarray(0, c), k = m - below;
  const upper = select(inBin, k);
  if (n % 2) return upper;
  let lower = -Infinity;
  if (k > 0) for (let i = 0; i < k; i++) { if (inBin[i] > lower) lower = inBin[i]; } // after selecting k, the bin's values before it are ≤ it
  else for (let i = 0; i < n; i++) { const x = v[i], b = ((x - lo) * scale) | 0; if ((b < top ? b : top) < bin && x > lower) lower = x; } // the bins below
  return (lower + upper) / 2;
}
