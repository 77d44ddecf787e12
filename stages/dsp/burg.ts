// Burg's method for an autoregressive model: reflection coefficients from the mean of the forward and backward prediction
// errors' powers, which keeps every |k| ≤ 1 and so the model stable (Burg 1975; Press et al., Numerical Recipes, 3rd ed., §13.6).

/**
 * The prediction-error filter a[0] = 1, a[1…q] of x, q ≤ maxOrder: x[n] ≈ −Σ a[j]·x[n − j]. The order stops rising once the
 * prediction error's power falls below `stopRatio` of the signal's, where further stages would fit rounding alone.
 */
export function burgPredictor(x: Float64Array, maxOrder = 128, stopRatio = 1e-12): Float64Array {
  const n = x.length, f = Float64Array.from(x), b = Float64Array.from(x);
  let a = new Float64Array([1]);
  let power = 0;
  for (let i = 0; i < n; i++) power += x[i] * x[i];
  const floor = power * stopRatio;
  for (let m = 0; m < Math.min(maxOrder, n - 1); m++) {
    let num = 0, den = 0;
    for (let i = m + 1; i < n; i++) { num += f[i] * b[i - 1]; den += f[i] * f[i] + b[i - 1] * b[i - 1]; }
    if (!(den > 0)) break;
    const k = (-2 * num) / den;
    const next = new Float64Array(m + 2);
    for (let j = 0; j <= m + 1; j++) next[j] = (j <= m ? a[j] : 0) + k * (m + 1 - j <= m ? a[m + 1 - j] : 0);
    a = next;
    // Descending, so that b[i − 1] is still the previous order's error when b[i] is made from it.
    for (let i = n - 1; i > m; i--) { const fi = f[i], bi = b[i - 1]; f[i] = fi + k * bi; b[i] = bi + k * fi; }
    power *= 1 - k * k;
    if (power <= floor) break;
  }
  return a;
}
