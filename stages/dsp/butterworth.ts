// Butterworth IIR design as second-order sections: analog prototype, frequency transformation, bilinear transform with pre-warping (Oppenheim & Schafer, Discrete-Time Signal Processing, §7.1; the zpk route of scipy.signal.butter).
import { abs, add, c, div, expi, mul, prod, scale, sqrt, sub, type C } from './complex.js';

export type FilterKind = 'lowpass' | 'highpass' | 'bandpass' | 'bandstop';

export interface FilterSpec {
  kind: FilterKind;
  /** Order of the low-pass prototype; band filters have twice as many poles (common practice, as scipy.signal.butter counts). */
  order: number;
  /** Cut-off for low- and high-pass, Hz. */
  cutoff_hz?: number;
  /** Band edges for band-pass and band-stop, Hz. */
  low_hz?: number;
  high_hz?: number;
  zero_phase?: boolean;
}

/** One biquad [b0, b1, b2, a0 = 1, a1, a2]; a first-order section has b2 = a2 = 0. */
export type Section = [number, number, number, number, number, number];

/** The cut-off frequencies a spec names, in Hz. */
export function edgesOf(spec: FilterSpec): number[] {
  return spec.kind === 'lowpass' || spec.kind === 'highpass' ? [spec.cutoff_hz!] : [spec.low_hz!, spec.high_hz!];
}

export function butterworthSos(spec: FilterSpec, fs: number): Section[] {
  const n = spec.order;
  const edges = edgesOf(spec);
  if (!Number.isInteger(n) || n < 1 || n > 10) throw new Error(`filter order must be a whole number from 1 to 10, got ${n}`);
  for (const f of edges) if (!(f > 0 && f < fs / 2)) throw new Error(`cut-off ${f} Hz must lie between 0 and the Nyquist frequency ${fs / 2} Hz`);
  if (edges.length === 2 && !(edges[0] < edges[1])) throw new Error(`band edges must be low < high, got ${edges[0]} and ${edges[1]} Hz`);
  // Analog prototype poles on the left half of the unit circle (scipy.signal.buttap).
  const proto: C[] = [];
  for (let k = -n + 1; k < n; k += 2) proto.push(scale(expi((Math.PI * k) / (2 * n)), -1));
  // Pre-warp so the digital cut-offs land exactly where asked: ωa = 2·fs·tan(π·f/fs).
  const warped = edges.map((f) => 2 * fs * Math.tan((Math.PI * f) / fs));
  let zeros: C[] = [], poles: C[], gain = 1;
  if (spec.kind === 'lowpass') {
    poles = proto.map((p) => scale(p, warped[0]));
    gain = warped[0] ** n;
  } else if (spec.kind === 'highpass') {
    poles = proto.map((p) => div(c(warped[0]), p));
    zeros = Array.from({ length: n }, () => c(0));
    gain = prod(proto.map((p) => scale(p, -1))).re ** -1;
  } else {
    const wo = Math.sqrt(warped[0] * warped[1]), bw = warped[1] - warped[0];
    const base = spec.kind === 'bandpass' ? proto.map((p) => scale(p, bw / 2)) : proto.map((p) => div(c(bw / 2), p));
    poles = base.flatMap((p) => { const r = sqrt(sub(mul(p, p), c(wo * wo))); return [add(p, r), sub(p, r)]; });
    if (spec.kind === 'bandpass') {
      zeros = Array.from({ length: n }, () => c(0));
      gain = bw ** n;
    } else {
      zeros = Array.from({ length: 2 * n }, (_, i) => c(0, i % 2 ? -wo : wo));
      gain = 1 / prod(proto.map((p) => scale(p, -1))).re;
    }
  }
  // Bilinear transform z = (2fs + s)/(2fs − s); zeros at infinity map to z = −1.
  const k2 = 2 * fs;
  const zd = zeros.map((z) => div(add(c(k2), z), sub(c(k2), z)));
  while (zd.length < poles.length) zd.push(c(-1));
  const pd = poles.map((p) => div(add(c(k2), p), sub(c(k2), p)));
  gain *= div(prod(zeros.map((z) => sub(c(k2), z))), prod(poles.map((p) => sub(c(k2), p)))).re;
  return toSections(zd, pd, gain);
}

/** Pairs conjugate poles (and zeros) into biquads; a lone real pole makes a first-order section. Gain goes on the first section. */
export function toSections(zeros: C[], poles: C[], gain: number): Section[] {
  const pairs = (xs: C[]) => {
    const eps = 1e-9;
    const upper = xs.filter((x) => x.im > eps).sort((a, b) => abs(a) - abs(b));
    const real = xs.filter((x) => Math.abs(x.im) <= eps).map((x) => x.re).sort((a, b) => a - b);
    const out: [number, number][] = upper.map((x) => [-2 * x.re, x.re * x.re + x.im * x.im]); // z² − 2Re(x)z + |x|²
    // Real roots pair outermost-first, so band-pass zeros at +1 and −1 share a section: 1 − z⁻².
    for (let i = 0, j = real.length - 1; i < j; i++, j--) out.push([-(real[i] + real[j]), real[i] * real[j]]);
    if (real.length % 2) out.push([-real[(real.length - 1) / 2], 0]);
    return out;
  };
  const pp = pairs(poles), zz = pairs(zeros);
  return pp.map(([a1, a2], i) => {
    const [b1, b2] = zz[i] ?? [0, 0];
    const g = i === 0 ? gain : 1;
    return [g, g * b1, g * b2, 1, a1, a2];
  });
}

/** |H(e^{jω})| of a cascade at frequency f. */
export function magnitude(sos: Section[], f: number, fs: number): number {
  const z1 = expi((-2 * Math.PI * f) / fs), z2 = mul(z1, z1);
  let h = c(1);
  for (const [b0, b1, b2, , a1, a2] of sos) {
    const num = add(add(c(b0), scale(z1, b1)), scale(z2, b2));
    const den = add(add(c(1), scale(z1, a1)), scale(z2, a2));
    h = mul(h, div(num, den));
  }
  return abs(h);
}

/** Largest pole radius: how slowly the impulse response dies away. */
export function slowestPoleRadius(sos: Section[]): number {
  return Math.max(...sos.map(([, , , , a1, a2]) => {
    const d = a1 * a1 - 4 * a2;
    return d >= 0 ? Math.max(Math.abs((-a1 + Math.sqrt(d)) / 2), Math.abs((-a1 - Math.sqrt(d)) / 2)) : Math.sqrt(a2);
  }));
}
