// Frequency weightings A and C of IEC 61672-1:2013 in their analytic form (Annex E, equations E.1 to E.6): four pole
// frequencies, normalised here exactly to 0 dB at 1 kHz (the standard's rounded constants A1000 = −2.000 dB and
// C1000 = −0.062 dB give the same curve within 0.001 dB).

export type Weighting = 'A' | 'C';

/** Pole frequencies f1…f4 of IEC 61672-1:2013 (E.4 and E.5), Hz. */
export const POLE_HZ = { f1: 20.598997, f2: 107.65265, f3: 737.86223, f4: 12194.217 } as const;

function response(kind: Weighting, f: number): number {
  const s = f * f, { f1, f2, f3, f4 } = POLE_HZ;
  return kind === 'A'
    ? (f4 * f4 * s * s) / ((s + f1 * f1) * Math.sqrt((s + f2 * f2) * (s + f3 * f3)) * (s + f4 * f4))
    : (f4 * f4 * s) / ((s + f1 * f1) * (s + f4 * f4));
}

const AT_1000 = { A: response('A', 1000), C: response('C', 1000) };

/** |W(f)|: the weighting as a magnitude, 1 at 1 kHz. */
export const weightingGain = (kind: Weighting, f: number): number => response(kind, f) / AT_1000[kind];

/** The weighting in dB (−∞ at 0 Hz). */
export const weightingDb = (kind: Weighting, f: number): number => 20 * Math.log10(weightingGain(kind, f));

/** The analog transfer function's zeros and poles, rad/s: zeros at 0 Hz, real poles at −2π·fi (A: 4 zeros; C: 2). */
export function analogRoots(kind: Weighting): { zeros: number[]; poles: number[] } {
  const w = (f: number) => -2 * Math.PI * f, { f1, f2, f3, f4 } = POLE_HZ;
  return kind === 'A'
    ? { zeros: [0, 0, 0, 0], poles: [w(f1), w(f1), w(f2), w(f3), w(f4), w(f4)] }
    : { zeros: [0, 0], poles: [w(f1), w(f1), w(f4), w(f4)] };
}
