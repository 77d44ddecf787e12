// Digital A and C weighting filters from the pole frequencies of IEC 61672-1:2013: the zeros at 0 Hz and the poles f1, f2, f3
// by the bilinear transform (Oppenheim & Schafer §7.1; their frequencies lie far below Nyquist at the rates microphones use);
// the double pole f4 = 12.2 kHz, near or above Nyquist where the bilinear transform would squeeze the response to zero,
// by a second-order section with matched-z poles z = e^(−2π·f4/fs) and a numerator fitted to the rest of the analytic
// magnitude from 10 Hz to 20 kHz or Nyquist (fitted-section.ts). The cascade is normalised to 0 dB at 1 kHz.
import { magnitude, toSections, type Section } from './butterworth.js';
import { c } from './complex.js';
import { fitSection } from './fitted-section.js';
import { analogRoots, POLE_HZ, weightingGain, type Weighting } from './frequency-weighting.js';

/** Bilinear transform of real analog roots (rad/s): s → z = (2fs + s)/(2fs − s). */
const bilinear = (roots: number[], fs: number) => roots.map((s) => (2 * fs + s) / (2 * fs - s));

/** Scales the cascade so that |H(1 kHz)| = 1. */
function normalised(sos: Section[], fs: number): Section[] {
  const g = 1 / magnitude(sos, 1000, fs);
  return sos.map((s, i) => (i === 0 ? [s[0] * g, s[1] * g, s[2] * g, s[3], s[4], s[5]] : s));
}

/** The A or C weighting filter at sample rate fs, as second-order sections. Needs 1 kHz below Nyquist. */
export function weightingFilter(kind: Weighting, fs: number): Section[] {
  if (!(fs > 2000)) throw new Error(`a weighting filter needs a sample rate above 2 kHz (its 0 dB point is 1 kHz), got ${fs} Hz`);
  const { zeros, poles } = analogRoots(kind);
  const low = poles.filter((p) => p !== -2 * Math.PI * POLE_HZ.f4);
  const lowSos = toSections(bilinear(zeros, fs).map((z) => c(z)), bilinear(low, fs).map((p) => c(p)), 1);
  const r = Math.exp((-2 * Math.PI * POLE_HZ.f4) / fs);
  const rest = fitSection((f) => weightingGain(kind, f) / magnitude(lowSos, f, fs), -2 * r, r * r, fs, 10, Math.min(20000, 0.9999 * fs / 2));
  return normalised([...lowSos, rest], fs);
}

/** The plain design for comparison: every root by the bilinear transform, the two excess poles' zeros at z = −1 (as scipy.signal.bilinear_zpk). */
export function bilinearWeightingFilter(kind: Weighting, fs: number): Section[] {
  const { zeros, poles } = analogRoots(kind);
  const zd = [...bilinear(zeros, fs), ...poles.slice(zeros.length).map(() => -1)];
  return normalised(toSections(zd.map((z) => c(z)), bilinear(poles, fs).map((p) => c(p)), 1), fs);
}
