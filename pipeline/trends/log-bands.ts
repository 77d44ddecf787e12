// Spectra for pictures on a log frequency axis: bins merged into bands of about equal width in ratio, so the low end keeps
// every bin while the top, where hundreds of bins would share a few pixels, is averaged. Equal-width bins thinned instead
// would leave the lowest decades a few coarse steps.

/** Band k spans edges[k] to edges[k + 1] Hz; density[k] is the mean density over it (unit²/Hz). */
export interface Spectrum { edges: Float64Array; density: Float32Array }

/**
 * Adjacent bands merged into `bands` or fewer (one more where rounding leaves a sliver at the top), each at least
 * (top/bottom)^(1/bands) wide in ratio unless one input band is wider; a merged band's density is the width-weighted mean of
 * its parts, so the power over it is kept (the integral of the density; common practice).
 */
export function logBands(edges: ArrayLike<number>, density: ArrayLike<number>, bands: number): Spectrum {
  const n = density.length;
  if (!n) return { edges: new Float64Array(0), density: new Float32Array(0) };
  const ratio = (edges[n] / edges[0]) ** (1 / bands);
  const outEdges = [edges[0]], outDensity: number[] = [];
  for (let k = 0; k < n;) {
    const lo = edges[k];
    let j = k + 1;
    while (j < n && edges[j] < lo * ratio) j++;
    let power = 0;
    for (let i = k; i < j; i++) power += density[i] * (edges[i + 1] - edges[i]);
    outDensity.push(power / (edges[j] - lo));
    outEdges.push(edges[j]);
    k = j;
  }
  return { edges: Float64Array.from(outEdges), density: Float32Array.from(outDensity) };
}

/**
 * A Welch spectrum (bin k centred on k·df, df wide) as the pictures draw it: the 0 Hz bin left out, since a log frequency axis
 * cannot show it, and the rest in at most about `bands` bands.
 */
export function welchBands(s: { df: number; density: ArrayLike<number> }, bands: number): Spectrum {
  const n = s.density.length;
  if (n < 2) return { edges: new Float64Array(0), density: new Float32Array(0) };
  const edges = Float64Array.from({ length: n }, (_, k) => (k + 0.5) * s.df); // bins 1 … n − 1: from (k − ½)·df to (k + ½)·df
  return logBands(edges, Float64Array.from({ length: n - 1 }, (_, k) => s.density[k + 1]), bands);
}

/** Where a band's line point is drawn: midway between its edges, a single bin's own frequency k·df. */
export const bandCentre = (s: Spectrum, k: number) => (s.edges[k] + s.edges[k + 1]) / 2;
