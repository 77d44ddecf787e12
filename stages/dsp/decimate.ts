// Decimation by a power of two in halving stages: binomial low-pass stages while the rate is high, a Butterworth low-pass
// for the last halving (multistage decimation: Crochiere & Rabiner, Multirate Digital Signal Processing, 1983, ch. 5).
import { butterworthSos, magnitude, slowestPoleRadius, type Section } from './butterworth.js';
import { sosStepState, SosFilter } from './sosfilt.js';

/**
 * The figures the decimator is designed to, by output rate fd = fs/D: frequencies up to fd/6 are read (`READ_FRACTION`).
 * The last halving (2fd → fd) is a 4th-order Butterworth low-pass at 0.34·fd: 0.008 dB down at fd/6, 64 dB down at
 * 5fd/6, the band folding onto [0, fd/6]. Each earlier halving (r → r/2, r ≥ 4fd) is (1 + z⁻¹)⁴/16, whose four zeros at
 * r/2 keep the band folding onto [0, fd/6] at least 70.7 dB down (sin(π/24)⁴); its droop there, at most 0.30 + 0.07 +
 * … dB, is known exactly and divided out of a spectrum by `decimatorPower` (our choice of figures: ≤ 0.01 dB, ≥ 60 dB).
 */
export const READ_FRACTION = 1 / 6;
export const LAST_ORDER = 4;
export const LAST_CUTOFF = 0.34;
/** Binomial order of the earlier halvings. */
export const BINOMIAL_ORDER = 4;

const isPowerOfTwo = (n: number) => n >= 2 && (n & (n - 1)) === 0;

/**
 * A finer spectrum whose periodograms span `span` samples at fs, read up to `top` Hz: taken from every D-th sample with a
 * segment of span/D, D the largest power of two up to span/segment that keeps `top` below READ_FRACTION of fs/D.
 */
export function decimatedSpan(span: number, segment: number, top: number, fs: number): { segment: number; decimation: number } {
  let d = span / segment;
  while (d > 1 && top > (READ_FRACTION * fs) / d) d /= 2;
  return { segment: span / d, decimation: d };
}

/** The last halving's low-pass, at its input rate 2·fs/D. */
export const lastHalving = (fs: number, factor: number): Section[] =>
  butterworthSos({ kind: 'lowpass', order: LAST_ORDER, cutoff_hz: LAST_CUTOFF * (fs / factor) }, 2 * (fs / factor));

// A cascade's response is the product of its stages' (each at its own rate); |1 + e^(−jω)|⁴/16 = cos⁴(ω/2) for the binomial.
/**
 * |H(f)|² of the whole decimator at f (below fs/(2D)), as the output sees it: the binomial stages cos⁸(πf/r) at each of
 * their rates r = fs, fs/2, … 4fs/D, and the Butterworth's |H|² at 2fs/D.
 */
export function decimatorPower(f: number, fs: number, factor: number, last: Section[] = lastHalving(fs, factor)): number {
  let p = magnitude(last, f, (2 * fs) / factor) ** 2;
  for (let r = fs; r >= (4 * fs) / factor; r /= 2) p *= Math.cos((Math.PI * f) / r) ** (2 * BINOMIAL_ORDER);
  return p;
}

// An IIR filter's transient decays as its slowest pole's radius to the power of the samples (Oppenheim & Schafer §5.2).
/**
 * Output samples a disturbance takes to die away: the Butterworth's slowest pole down to 1e-10 of a step (at its rate,
 * two of its samples an output), plus the binomial stages' reach (four samples at each rate: under two outputs in all).
 */
export function settlingOutputs(last: Section[]): number {
  return Math.ceil(Math.log(1e-10) / Math.log(slowestPoleRadius(last)) / 2) + 2;
}

/** One binomial halving's memory: its last four inputs (oldest first) and whether its next input is kept. */
interface Halving { h: Float64Array; odd: boolean }

// x[i], or for i < 0 the stage's memory of the inputs before x (h[4 + i]).
const before = (x: Float64Array, h: Float64Array, i: number): number => (i >= 0 ? x[i] : h[4 + i]);

// Binomial low-pass (1 + z⁻¹)⁴/16, a CIC filter of four sections and differential delay 1 (Hogenauer, IEEE Trans. ASSP 29(2), 1981), polyphase: kept outputs only.
/**
 * y[m] = Σ c_j·x[i − j], (1 + z⁻¹)⁴/16, at every second input i (the first at x[odd ? 1 : 0]), x[−4 … −1] from the
 * stage's memory: only the kept outputs are computed. Returns the outputs written to y; the memory moves on by x.
 */
function halve(x: Float64Array, n: number, s: Halving, y: Float64Array): number {
  const h = s.h;
  let m = 0, i = s.odd ? 1 : 0;
  for (; i < n && i < 4; i += 2) {
    y[m++] = (before(x, h, i) + 4 * before(x, h, i - 1) + 6 * before(x, h, i - 2) + 4 * before(x, h, i - 3) + before(x, h, i - 4)) / 16;
  }
  for (; i < n; i += 2) y[m++] = (x[i] + 4 * x[i - 1] + 6 * x[i - 2] + 4 * x[i - 3] + x[i - 4]) / 16;
  s.odd = i - n === 1;
  for (let j = 0; j < 4; j++) h[j] = n - 4 + j >= 0 ? x[n - 4 + j] : h[j + n];
  return m;
}

// Multistage decimation (Crochiere & Rabiner 1983, ch. 5): binomial halvings, then the Butterworth at 2fs/D, every second output kept.
/**
 * Low-passes a stream and keeps every D-th sample (D a power of two from 2), chunk by chunk, memory carried: output m is
 * the filtered signal at input sample m·D. The filters start in the steady state of the first finite sample (as if it
 * had always been there), so a recording's start costs no output. Missing samples (NaN, ±Inf) are held at the last
 * finite value through the filters, and the outputs from the first after a gap's start to the settling after its end
 * are NaN: a gap breaks the output stream, and no finite output holds any of it.
 */
export class Decimator {
  readonly last: Section[];
  readonly settling: number;
  private readonly halvings: Halving[];
  private readonly filter: SosFilter;
  private readonly buffers: Float64Array[] = [];
  private started = false;
  private held = 0;
  // Whether the Butterworth's next output is dropped (its count of inputs so far is odd).
  private skip = false;
  // Inputs and outputs so far, and the outputs gaps make NaN, [first, last] (the last may grow while its gap goes on).
  private inputs = 0;
  private outputs = 0;
  private readonly gaps: [number, number][] = [];

  constructor(readonly fs: number, readonly factor: number, private readonly buffer: (length: number) => Float64Array = (n) => new Float64Array(n)) {
    if (!isPowerOfTwo(factor)) throw new Error(`decimation factor must be a power of two from 2, got ${factor}`);
    this.last = lastHalving(fs, factor);
    this.settling = settlingOutputs(this.last);
    this.halvings = Array.from({ length: Math.log2(factor) - 1 }, () => ({ h: new Float64Array(4), odd: false }));
    this.filter = new SosFilter(this.last);
  }

  /** Output rate fs/D. */
  get rate(): number { return this.fs / this.factor; }

  /** Outputs a chunk of `length` inputs gives at most. */
  outputsAtMost(length: number): number { return Math.ceil(length / this.factor) + 1; }

  /**
   * Decimates x into out (at least `outputsAtMost(x.length)` long); `missing` is how many of x are missing (0 takes the
   * plain path). Returns how many outputs were written, and how many of them are NaN.
   */
  push(x: Float64Array, out: Float64Array, missing = 0): { length: number; missing: number } {
    if (!this.started && missing === 0 && x.length > 0) this.start(x[0]);
    const input = missing > 0 || !this.started ? this.holdGaps(x) : x;
    const from = this.outputs, length = this.run(input, out);
    this.inputs += x.length;
    this.outputs += length;
    let nan = 0;
    for (const [a, b] of this.gaps) for (let m = Math.max(a, from); m <= b && m < from + length; m++) { out[m - from] = NaN; nan++; }
    while (this.gaps.length && this.gaps[0][1] < this.outputs) this.gaps.shift();
    return { length, missing: nan };
  }

  // A copy of x with every missing sample held at the last finite value; each gap marks the outputs it reaches as NaN:
  // those at input m·D from the missing sample on, through the settling after the next input.
  private holdGaps(x: Float64Array): Float64Array {
    const y = this.take(0, x.length).subarray(0, x.length);
    for (let i = 0; i < x.length; i++) {
      const v = x[i];
      if (v - v === 0) {
        if (!this.started) this.start(v);
        y[i] = this.held = v;
        continue;
      }
      y[i] = this.held;
      const at = this.inputs + i, first = Math.ceil(at / this.factor), last = Math.ceil((at + 1) / this.factor) + this.settling;
      const gap = this.gaps[this.gaps.length - 1];
      if (gap && gap[1] >= first - 1) gap[1] = last;
      else this.gaps.push([first, last]);
    }
    return y;
  }

  // Every filter in the steady state of v: the binomial memories hold v, the Butterworth the state a step to v leaves.
  private start(v: number): void {
    this.started = true;
    for (const s of this.halvings) s.h.fill(v);
    const zi = sosStepState(this.last);
    for (let i = 0; i < zi.length; i++) this.filter.state[i] = zi[i] * v;
  }

  // The binomial halvings one after another, then the Butterworth at 2fs/D, and every second of its outputs.
  private run(x: Float64Array, out: Float64Array): number {
    let n = x.length, at = x;
    this.halvings.forEach((s, j) => {
      const y = this.take(j + 1, (n >> 1) + 1);
      n = halve(at, n, s, y);
      at = y;
    });
    // In place on the halvings' buffer; x itself (D = 2) is the caller's, so it is filtered into a buffer of its own.
    const z = (at === x ? this.take(1, n) : at).subarray(0, n);
    this.filter.process(at === x ? x : z, z);
    let m = 0, i = this.skip ? 1 : 0;
    for (; i < n; i += 2) out[m++] = z[i];
    this.skip = i - n === 1;
    return m;
  }

  // Working buffer `k` of at least `length` doubles, kept for the next chunk.
  private take(k: number, length: number): Float64Array {
    const b = this.buffers[k];
    if (b && b.length >= length) return b;
    return (this.buffers[k] = this.buffer(Math.max(length, 2 * (b?.length ?? 0))));
  }
}
