// A digital weighting filter held against the analytic curve at the one-third-octave mid-band frequencies (exact base-10,
// IEC 61260-1), where IEC 61672-1:2013 table 3 gives its design goals and class 1 acceptance limits.
import { magnitude, type Section } from './dsp/butterworth.js';
import { weightingDb, type Weighting } from './dsp/frequency-weighting.js';
import { bandsOf } from './octave.js';

/** Class 1 acceptance limits [lower, upper] in dB by nominal frequency, IEC 61672-1:2013 table 3 (from memory). */
export const CLASS1_LIMITS_DB: Record<number, [number, number]> = {
  10: [-Infinity, 3.5], 12.5: [-Infinity, 3.0], 16: [-4.5, 2.5], 20: [-2.5, 2.5], 25: [-2.0, 2.5], 31.5: [-2.0, 2.0],
  40: [-1.5, 1.5], 50: [-1.5, 1.5], 63: [-1.5, 1.5], 80: [-1.5, 1.5], 100: [-1.5, 1.5], 125: [-1.5, 1.5], 160: [-1.5, 1.5],
  200: [-1.4, 1.4], 250: [-1.4, 1.4], 315: [-1.4, 1.4], 400: [-1.4, 1.4], 500: [-1.4, 1.4], 630: [-1.4, 1.4], 800: [-1.4, 1.4],
  1000: [-1.1, 1.1], 1250: [-1.4, 1.4], 1600: [-1.6, 1.6], 2000: [-1.6, 1.6], 2500: [-1.6, 1.6], 3150: [-1.6, 1.6],
  4000: [-1.6, 1.6], 5000: [-2.1, 2.1], 6300: [-2.6, 2.1], 8000: [-3.1, 2.1], 10000: [-3.6, 2.6], 12500: [-6.0, 3.0],
  16000: [-17.0, 3.5], 20000: [-Infinity, 4.0],
};

export interface WeightingCheck {
  /** Largest |digital − analytic| over the bands checked, dB. */
  maxAbsDb: number;
  /** Bands whose deviation lies outside the class 1 acceptance limits. */
  outside: { nominal: number; deviationDb: number }[];
  /** Highest nominal frequency checked, Hz. */
  upToHz: number;
}

/** Deviation of `sos` from the analytic weighting at the mid-bands from 10 Hz to 10 kHz that lie below Nyquist. */
export function checkWeighting(sos: Section[], kind: Weighting, fs: number): WeightingCheck {
  const out: WeightingCheck = { maxAbsDb: 0, outside: [], upToHz: 0 };
  for (const band of bandsOf(3, 10, 10000)) {
    if (band.mid >= fs / 2) break;
    const d = 20 * Math.log10(magnitude(sos, band.mid, fs)) - weightingDb(kind, band.mid);
    const [lo, hi] = CLASS1_LIMITS_DB[band.nominal];
    out.maxAbsDb = Math.max(out.maxAbsDb, Math.abs(d));
    out.upToHz = band.nominal;
    if (!(d >= lo && d <= hi)) out.outside.push({ nominal: band.nominal, deviationDb: d });
  }
  return out;
}
