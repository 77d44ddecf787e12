// Cascaded biquads in direct form II transposed, state carried across chunks (Oppenheim & Schafer §6.5; as scipy.signal.sosfilt).
import type { Section } from './butterworth.js';

export class SosFilter {
  /** Two state values per section. */
  readonly state: Float64Array;
  constructor(readonly sos: Section[], initial?: Float64Array) {
    this.state = initial ? Float64Array.from(initial) : new Float64Array(2 * sos.length);
  }

  /** Filters x into y (may be the same array). */
  process(x: Float64Array, y: Float64Array): void {
    const z = this.state;
    if (y !== x) y.set(x);
    for (let s = 0; s < this.sos.length; s++) {
      const [b0, b1, b2, , a1, a2] = this.sos[s];
      let z1 = z[2 * s], z2 = z[2 * s + 1];
      for (let i = 0; i < y.length; i++) {
        const xi = y[i];
        const yi = b0 * xi + z1;
        z1 = b1 * xi - a1 * yi + z2;
        z2 = b2 * xi - a2 * yi;
        y[i] = yi;
      }
      z[2 * s] = z1; z[2 * s + 1] = z2;
    }
  }
}

// Steady-state state for a unit step input, section by section (scipy.signal.sosfilt_zi / lfilter_zi: solve (I − Aᵀ)·zi = b[1:] − a[1:]·b0).
export function sosStepState(sos: Section[]): Float64Array {
  const zi = new Float64Array(2 * sos.length);
  let gain = 1;
  sos.forEach(([b0, b1, b2, , a1, a2], s) => {
    const r1 = b1 - a1 * b0, r2 = b2 - a2 * b0;
    // [[1 + a1, −1], [a2, 1]] · [z1, z2] = [r1, r2]
    const det = 1 + a1 + a2;
    zi[2 * s] = gain * (r1 + r2) / det;
    zi[2 * s + 1] = gain * ((1 + a1) * r2 - a2 * r1) / det;
    gain *= (b0 + b1 + b2) / (1 + a1 + a2);
  });
  return zi;
}
