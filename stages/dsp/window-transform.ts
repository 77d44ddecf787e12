// The discrete-time Fourier transform of a spectral window, in closed form: where a steady tone's power falls on the bins.
import { COSINE_CONSTANT, type WindowName } from './window.js';

// Dirichlet kernel Σₙ e^(−iθn), n = 0 … L−1, = e^(−iθ(L−1)/2)·sin(Lθ/2)/sin(θ/2) (Oppenheim & Schafer, Discrete-Time Signal
// Processing, 3rd ed., 2.9); at θ a multiple of 2π its limit by l'Hôpital's rule. Returns [real, imaginary].
function dirichlet(theta: number, length: number): [number, number] {
  const s = Math.sin(theta / 2);
  const ratio = Math.abs(s) < 1e-12 ? (length * Math.cos((length * theta) / 2)) / Math.cos(theta / 2) : Math.sin((length * theta) / 2) / s;
  const phase = (-theta * (length - 1)) / 2;
  return [ratio * Math.cos(phase), ratio * Math.sin(phase)];
}

// A cosine window's transform is three shifted Dirichlet kernels: a·D(θ) − (1 − a)/2·(D(θ − 2π/L) + D(θ + 2π/L)) (Harris 1978).
/** |W(θ)|² of the periodic window `name` of `length` samples at θ radians a sample (θ = 2π·f/fs). */
export function windowPower(name: WindowName, length: number, theta: number): number {
  const a = COSINE_CONSTANT[name], b = (1 - a) / 2, step = (2 * Math.PI) / length;
  const [r0, i0] = dirichlet(theta, length);
  if (b === 0) return a * a * (r0 * r0 + i0 * i0);
  const [r1, i1] = dirichlet(theta - step, length), [r2, i2] = dirichlet(theta + step, length);
  const re = a * r0 - b * (r1 + r2), im = a * i0 - b * (i1 + i2);
  return re * re + im * im;
}

// Parseval's sum of the periodic cosine window's squares: L·(a² + (1 − a)²/2) (Harris 1978).
/** Σ w[n]² of the periodic window `name` of `length` samples. */
export const windowEnergy = (name: WindowName, length: number): number => length * (COSINE_CONSTANT[name] ** 2 + (1 - COSINE_CONSTANT[name]) ** 2 / 2);
