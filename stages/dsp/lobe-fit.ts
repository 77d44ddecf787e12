// A steady tone's frequency and power, fitted to its window lobe in a one-sided power spectral density.
import { windowEnergy, windowPower } from './window-transform.js';
import type { Psd } from './welch.js';
import type { WindowName } from './window.js';

/** A tone found in a spectrum: its frequency (Hz) and mean square (the density's unit² ). */
export interface FittedTone { frequency: number; power: number }

/**
 * The density a tone of mean square `power` at `f` puts on bin k of `p` (one-sided, both its positive and negative
 * frequency images, their cross term left out as Welch's averaging over segments leaves it out): P·(|W(θk − θ0)|² +
 * |W(θk + θ0)|²)/(fs·Σw²), the periodogram's density scaling (Welch 1967), fs the rate of the spectrum's samples.
 */
export function toneDensity(p: Psd, window: WindowName, f: number, power: number, k: number): number {
  const fs = p.df * p.segment, norm = fs * windowEnergy(window, p.length);
  const at = (g: number) => windowPower(window, p.length, (2 * Math.PI * g) / fs);
  return (power * (at(k * p.df - f) + at(k * p.df + f))) / norm;
}

// Golden-section search for the least-squares frequency (Kiefer 1953; Press et al., Numerical Recipes, 3rd ed., 10.2),
// the power solved in closed form at each trial frequency (linear least squares in one unknown).
/**
 * The tone whose lobe best fits the density above `continuum` over the bins within one resolution bin `r` of the peak bin
 * `peak` (least squares). The peak bin is the nearest to the tone, so its frequency lies within half a bin of it.
 */
export function fitTone(p: Psd, window: WindowName, peak: number, r: number, continuum: number): FittedTone {
  const { density, df } = p;
  const from = Math.max(1, Math.ceil(peak - r / df)), to = Math.min(density.length - 1, Math.floor(peak + r / df));
  const misfit = (f: number): { residual: number; power: number } => {
    let sxy = 0, sxx = 0;
    for (let k = from; k <= to; k++) { const m = toneDensity(p, window, f, 1, k); sxy += m * (density[k] - continuum); sxx += m * m; }
    const power = sxx > 0 ? Math.max(0, sxy / sxx) : 0;
    let residual = 0;
    for (let k = from; k <= to; k++) residual += (density[k] - continuum - power * toneDensity(p, window, f, 1, k)) ** 2;
    return { residual, power };
  };
  const g = (Math.sqrt(5) - 1) / 2;
  let a = Math.max(df / 1e6, (peak - 0.6) * df), b = (peak + 0.6) * df;
  let c = b - g * (b - a), d = a + g * (b - a), fc = misfit(c).residual, fd = misfit(d).residual;
  for (let i = 0; i < 60 && b - a > df * 1e-9; i++) {
    if (fc <= fd) { b = d; d = c; fd = fc; c = b - g * (b - a); fc = misfit(c).residual; }
    else { a = c; c = d; fc = fd; d = a + g * (b - a); fd = misfit(d).residual; }
  }
  const frequency = (a + b) / 2;
  return { frequency, power: misfit(frequency).power };
}
