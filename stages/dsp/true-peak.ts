// True peak: the largest magnitude of the band-limited signal between the samples, by 4× oversampling
// (ITU-R BS.1770-4 Annex 2), interpolated only around candidate samples so the cost stays a small share of one pass.

/** Oversampling factor of the true-peak method (ITU-R BS.1770-4 Annex 2). */
export const OVERSAMPLING = 4;
/** Input samples each side of an interpolated point (24 taps per phase). */
const HALF = 12;
/** Kaiser window shape: with 24 taps the interpolation error stays below 2·10⁻⁴ up to fs/2.56. */
const BETA = 8;

// Zeroth-order modified Bessel function of the first kind by its power series (Abramowitz and Stegun 9.6.12).
function besselI0(x: number): number {
  let sum = 1, term = 1;
  for (let k = 1; k < 60 && term > 1e-17 * sum; k++) { term *= (x / (2 * k)) ** 2; sum += term; }
  return sum;
}

// Kaiser-windowed sinc (Oppenheim and Schafer, Discrete-Time Signal Processing, 7.6): one phase per fractional offset p/4,
// tap j weighting x[n − HALF + 1 + j]; each phase scaled to unit gain at DC.
function phases(): Float64Array[] {
  return Array.from({ length: OVERSAMPLING - 1 }, (_, i) => {
    const frac = (i + 1) / OVERSAMPLING;
    const h = Float64Array.from({ length: 2 * HALF }, (_, j) => {
      const t = frac - (j - HALF + 1);
      const u = t / HALF;
      return (Math.sin(Math.PI * t) / (Math.PI * t)) * (besselI0(BETA * Math.sqrt(Math.max(0, 1 - u * u))) / besselI0(BETA));
    });
    const sum = h.reduce((a, b) => a + b, 0);
    return h.map((v) => v / sum);
  });
}

const PHASES = phases();

/** The interpolated value at n + p/4 (p = 1, 2, 3) from x[n − HALF + 1 … n + HALF]. */
export function interpolateAt(x: Float64Array, n: number, p: number): number {
  const h = PHASES[p - 1];
  const from = n - HALF + 1;
  let y = 0;
  for (let j = 0; j < h.length; j++) y += h[j] * x[from + j];
  return y;
}

/** |y|, with a non-finite value (from NaN or ±Infinity in the support) counting as 0. */
const magnitude = (y: number) => (y < Infinity && y > -Infinity ? Math.abs(y) : 0);

// |y| at the two half-sample points beside x[i] (i − 1/2, i + 1/2), in one pass over the taps.
const [P1, P2, P3] = PHASES;
function halfPoints(x: Float64Array, i: number): number {
  let a = 0, d = 0;
  const from = i - HALF;
  for (let j = 0; j < 2 * HALF; j++) { const h = P2[j]; a += h * x[from + j]; d += h * x[from + j + 1]; }
  return Math.max(magnitude(a), magnitude(d));
}

// |y| at the two quarter-sample points beside x[i] (i − 1/4, i + 1/4).
function quarterPoints(x: Float64Array, i: number): number {
  let b = 0, c = 0;
  const from = i - HALF;
  for (let j = 0; j < 2 * HALF; j++) { b += P3[j] * x[from + j]; c += P1[j] * x[from + j + 1]; }
  return Math.max(magnitude(b), magnitude(c));
}

/**
 * Whether a candidate x[i] (|x[i]| = a) whose half-sample points reach `half` is worth its quarter-sample points, the
 * running true peak being `top` (at least `half`). Near the true peak the sample and the half-sample point on the peak's
 * side are both within half a sample of it, so by the inequality below (TruePeak) they add up to at least
 * (1 + guard) × the peak (2·cos²(π·f/(2fs)), derived).
 */
const needsQuarter = (a: number, half: number, top: number, guard: number) => a + half >= (1 + guard) * top * (1 - 1e-3);

/** The taps of halfPoints and quarterPoints as pairs (lane 0's, lane 1's), for the WebAssembly scan (true_peak_scan). */
export const TAP_PAIRS = {
  half: () => Float64Array.from({ length: 4 * HALF }, (_, k) => P2[k >> 1]),
  quarter: () => Float64Array.from({ length: 4 * HALF }, (_, k) => (k & 1 ? P1 : P3)[k >> 1]),
};

/** Common practice leaves content up to fs/2.56; without a declared highest frequency the true peak assumes that much. */
export const ASSUMED_RATIO = 2.56;

/** TruePeak's guard for a signal whose highest frequency is f (declared; else fs/2.56): cos(π·f/fs), f at most fs/2. */
export const guardFor = (fs: number, f: number | null | undefined): number => Math.cos(Math.PI * Math.min(0.5, f ? f / fs : 1 / ASSUMED_RATIO));

/** Samples an interpolated point needs on either side. */
export const SUPPORT = HALF;

/**
 * Where a stream's samples are put and how a stretch of them is scanned: `block(length)` gives room for at least `length`
 * samples (filled by the caller; its contents need not last), `scan` judges block[from, to) as TruePeak describes, samples
 * before `firstInterpolable` by their values only, reading and updating peaks (guard, sample peak, true peak).
 */
export interface PeakScan {
  block(length: number): Float64Array;
  scan(block: Float64Array, from: number, to: number, firstInterpolable: number, peaks: Float64Array): void;
}

/** The scan in TypeScript: the readable reference (the WebAssembly one, simdPeakScan in fft-simd.ts, finds the same). */
export function typescriptPeakScan(): PeakScan {
  let buf = new Float64Array(0);
  return {
    block: (length) => (buf.length >= length ? buf : (buf = new Float64Array(length))),
    scan(buf, from, to, firstInterpolable, peaks) {
      const guard = peaks[0];
      let peak = peaks[1], top = Math.max(peaks[2], peak), threshold = guard * top;
      for (let i = from; i < to; i++) {
        const v = buf[i];
        const a = v < 0 ? -v : v;
        if (a > peak) {
          if (!(a < Infinity)) continue; // ±Infinity is not a sample of the signal (NaN fails every comparison)
          peak = a;
          if (a > top) { top = a; threshold = guard * top; }
        }
        if (!(a >= threshold) || i < firstInterpolable) continue;
        const left = buf[i - 1], right = buf[i + 1];
        if (a < Math.abs(left) || a < Math.abs(right)) continue;
        // A flat top of three equal samples (clipping, a digital level such as a tacho pulse) is its own peak: interpolating
        // across its edges would measure their ringing (Gibbs), not the signal.
        if ((v === left && (v === right || v === buf[i - 2])) || (v === right && v === buf[i + 2])) continue;
        const half = halfPoints(buf, i);
        if (half > top) top = half;
        if (needsQuarter(a, half, top, guard)) { const quarter = quarterPoints(buf, i); if (quarter > top) top = quarter; }
        threshold = guard * top;
      }
      peaks[1] = peak;
      peaks[2] = top;
    },
  };
}

/** Samples scanned at once: with the carry, a block fills the scanner's room of 16,384 exactly. */
const BLOCK = 16384 - 2 * HALF;

/**
 * Largest sample magnitude and true peak of a stream, fed in chunks of any length.
 * Candidates: samples that are a local maximum of |x| and at least `guard` × the running true peak. With guard = cos(π·f/fs)
 * for the highest frequency f the signal holds, the sample nearest the true peak qualifies by magnitude: a signal band-limited
 * to f and bounded by M falls from a peak M no lower than M·cos(2πf·τ) within τ of it (from Szegő's inequality
 * s'² + (2πf)²s² ≤ (2πf)²M²; Duffin and Schaeffer 1937). Around each candidate the half-sample points are interpolated, and
 * the quarter-sample points where those could lie beside the true peak.
 * The first and last SUPPORT samples count with their sample values only (no interpolation across the recording's ends), and so
 * do flat tops of three or more equal samples.
 */
export class TruePeak {
  /** The last 2·HALF samples of the stream so far (zeros before the first sample), carried ahead of each new chunk. */
  private readonly carried = new Float64Array(2 * HALF);
  /** Samples seen in earlier chunks. */
  private seen = 0;
  /** Guard, sample peak, true peak. */
  private readonly peaks: Float64Array;

  constructor(guard: number, private readonly scanner: PeakScan = typescriptPeakScan()) {
    this.peaks = Float64Array.of(guard, 0, 0);
  }

  push(x: Float64Array): void {
    // In blocks of at most BLOCK samples with their carry: the scanner's room stays small (a power of two of 16,384 samples,
    // not twice a whole chunk), and each sample is judged exactly as in one long block.
    if (x.length > BLOCK) {
      for (let at = 0; at < x.length; at += BLOCK) this.push(x.subarray(at, Math.min(x.length, at + BLOCK)));
      return;
    }
    const carry = 2 * HALF, buf = this.scanner.block(carry + x.length);
    buf.set(this.carried);
    buf.set(x, carry);
    // Samples buf[from, to) are judged now: the carried ones whose right-hand support has arrived, and the chunk but its last HALF.
    const from = Math.max(HALF, carry - this.seen), to = carry + x.length - HALF;
    // buf index i is sample number seen − carry + i; it may be interpolated once HALF samples precede it.
    const firstInterpolable = carry - this.seen + HALF;
    this.scanner.scan(buf, from, to, Math.max(0, Math.min(firstInterpolable, 2 ** 31 - 1)), this.peaks);
    this.carried.set(buf.subarray(x.length, x.length + carry));
    this.seen += x.length;
  }

  /** The largest sample magnitude and the true peak (never below it); the last HALF samples count as samples. */
  result(): { samplePeak: number; truePeak: number } {
    const carry = 2 * HALF, buf = this.scanner.block(carry);
    buf.set(this.carried);
    // The stream's last HALF samples were held back awaiting support that will not come.
    const from = Math.max(HALF, carry - this.seen);
    this.scanner.scan(buf, from, carry, 2 ** 31 - 1, this.peaks);
    return { samplePeak: this.peaks[1], truePeak: Math.max(this.peaks[2], this.peaks[1]) };
  }
}
