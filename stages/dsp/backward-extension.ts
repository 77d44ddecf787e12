// A plausible past for a recording that starts in the middle of a signal: its (windowed) mean plus the backward linear prediction of
// its first stretch (Burg's model fitted to the time-reversed stretch, run on past its end; Press et al., Numerical Recipes,
// 3rd ed., §13.6 on extrapolation by linear prediction), so that a filter started on it meets the recording in steady state.
import { burgPredictor } from './burg.js';

/**
 * `length` samples to go before `start` (oldest first). A prediction that grows beyond twice the stretch's largest
 * deviation from its mean is not trusted: the past is then taken as the mean held constant.
 */
export function backwardExtension(start: Float64Array, length: number, maxOrder = 128, stopRatio = 1e-12): Float64Array {
  const n = start.length, out = new Float64Array(length);
  // Hann-weighted: a tone's share of a plain mean over a stretch that is no whole number of its periods would pass for offset.
  let mean = 0, weights = 0;
  for (let i = 0; i < n; i++) { const w = 1 - Math.cos((2 * Math.PI * (i + 0.5)) / n); mean += w * start[i]; weights += w; }
  mean = weights > 0 ? mean / weights : 0;
  out.fill(mean);
  const order = Math.min(maxOrder, Math.floor(n / 4));
  if (order < 1) return out;
  // The stretch reversed and centred, then predicted onwards: index n + i is i + 1 samples before the recording.
  const x = new Float64Array(n + length);
  let limit = 0;
  for (let i = 0; i < n; i++) { x[i] = start[n - 1 - i] - mean; limit = Math.max(limit, Math.abs(x[i])); }
  if (limit === 0) return out;
  const a = burgPredictor(x.subarray(0, n), order, stopRatio), q = a.length - 1;
  for (let i = n; i < n + length; i++) {
    let v = 0;
    for (let j = 1; j <= q; j++) v -= a[j] * x[i - j];
    if (!(Math.abs(v) <= 2 * limit)) return out;
    x[i] = v;
  }
  for (let i = 0; i < length; i++) out[length - 1 - i] = mean + x[n + i];
  return out;
}
