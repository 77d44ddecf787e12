// Fast Fourier transforms of power-of-two length in double precision, on split real and imaginary arrays, in JavaScript:
// the readable form of stages/dsp/fft-simd.c (which runs them), the source of its plans, and a candidate in bench/fft.ts.
// Complex: iterative radix-4 decimation in time over bit-reversed input (Cooley & Tukey, Math. Comp. 19, 1965), with a
// radix-2 first stage when log2 n is odd. Real input: one complex transform of half the length and a split step
// (Sorensen, Jones, Heideman & Burrus, IEEE Trans. ASSP 35(6), 1987). Twiddles come from Math.cos/sin, never by recursion.

/** Bit reversal of every index below n (n a power of two). */
export function bitReversal(n: number): Uint32Array {
  const bits = Math.log2(n), rev = new Uint32Array(n);
  for (let i = 0; i < n; i++) {
    let r = 0;
    for (let b = 0, v = i; b < bits; b++, v >>= 1) r = (r << 1) | (v & 1);
    rev[i] = r;
  }
  return rev;
}

/** Forward complex transform X[k] = Σ x[m]·e^(−2πikm/n). Fill the input in bit-reversed order (rev), then run(). */
export class ComplexFft {
  readonly rev: Uint32Array;
  /** Per radix-4 stage of span h: for j < h, cos and −sin of 2π·r·j/(4h) for r = 1, 2, 3. */
  private readonly twiddles: Float64Array[] = [];
  private readonly radix2First: boolean;

  constructor(readonly n: number) {
    if (!(n >= 2 && (n & (n - 1)) === 0)) throw new Error(`FFT length must be a power of two ≥ 2, got ${n}`);
    this.rev = bitReversal(n);
    this.radix2First = Math.log2(n) % 2 === 1;
    for (let h = this.radix2First ? 2 : 4; h < n; h *= 4) {
      const t = new Float64Array(6 * h);
      for (let j = 0; j < h; j++) {
        for (let r = 1; r <= 3; r++) {
          const a = (2 * Math.PI * r * j) / (4 * h);
          t[6 * j + 2 * r - 2] = Math.cos(a);
          t[6 * j + 2 * r - 1] = -Math.sin(a);
        }
      }
      this.twiddles.push(t);
    }
  }

  /** Transforms bit-reversed input in place into natural-order output. */
  run(re: Float64Array, im: Float64Array): void {
    const n = this.n;
    let h: number;
    if (this.radix2First) {
      for (let i = 0; i < n; i += 2) {
        const ar = re[i], ai = im[i], br = re[i + 1], bi = im[i + 1];
        re[i] = ar + br; im[i] = ai + bi; re[i + 1] = ar - br; im[i + 1] = ai - bi;
      }
      h = 2;
    } else {
      // Radix-4 stage of span 1: no twiddles. Blocks hold D0, D2, D1, D3 in that order (bit-reversed input).
      for (let g = 0; g < n; g += 4) {
        const t0r = re[g], t0i = im[g], t2r = re[g + 1], t2i = im[g + 1], t1r = re[g + 2], t1i = im[g + 2], t3r = re[g + 3], t3i = im[g + 3];
        const ar = t0r + t2r, ai = t0i + t2i, br = t0r - t2r, bi = t0i - t2i;
        const cr = t1r + t3r, ci = t1i + t3i, dr = t1r - t3r, di = t1i - t3i;
        re[g] = ar + cr; im[g] = ai + ci;
        re[g + 1] = br + di; im[g + 1] = bi - dr;
        re[g + 2] = ar - cr; im[g + 2] = ai - ci;
        re[g + 3] = br - di; im[g + 3] = bi + dr;
      }
      h = 4;
    }
    for (let s = 0; h < n; h *= 4, s++) {
      const tw = this.twiddles[s];
      const span = 4 * h;
      for (let g = 0; g < n; g += span) {
        for (let j = 0; j < h; j++) {
          const i0 = g + j, i2 = i0 + h, i1 = i2 + h, i3 = i1 + h; // D0, D2, D1, D3
          const c1 = tw[6 * j], s1 = tw[6 * j + 1], c2 = tw[6 * j + 2], s2 = tw[6 * j + 3], c3 = tw[6 * j + 4], s3 = tw[6 * j + 5];
          const t0r = re[i0], t0i = im[i0];
          const x1r = re[i1], x1i = im[i1], x2r = re[i2], x2i = im[i2], x3r = re[i3], x3i = im[i3];
          const t1r = c1 * x1r - s1 * x1i, t1i = c1 * x1i + s1 * x1r;
          const t2r = c2 * x2r - s2 * x2i, t2i = c2 * x2i + s2 * x2r;
          const t3r = c3 * x3r - s3 * x3i, t3i = c3 * x3i + s3 * x3r;
          const ar = t0r + t2r, ai = t0i + t2i, br = t0r - t2r, bi = t0i - t2i;
          const cr = t1r + t3r, ci = t1i + t3i, dr = t1r - t3r, di = t1i - t3i;
          re[i0] = ar + cr; im[i0] = ai + ci;
          re[i2] = br + di; im[i2] = bi - dr;
          re[i1] = ar - cr; im[i1] = ai - ci;
          re[i3] = br - di; im[i3] = bi + dr;
        }
      }
    }
  }
}

/** Forward transform of real input of length n: X[k] for k = 0 … n/2, through a complex transform of length n/2. */
export class RealFft {
  readonly half: ComplexFft;
  /** cos and −sin of 2πk/n for k ≤ n/4, the split step's twiddles. */
  private readonly split: Float64Array;
  private readonly zr: Float64Array;
  private readonly zi: Float64Array;

  constructor(readonly n: number) {
    if (!(n >= 4 && (n & (n - 1)) === 0)) throw new Error(`real FFT length must be a power of two ≥ 4, got ${n}`);
    this.half = new ComplexFft(n / 2);
    this.split = new Float64Array(2 * (n / 4 + 1));
    for (let k = 0; k <= n / 4; k++) { this.split[2 * k] = Math.cos((2 * Math.PI * k) / n); this.split[2 * k + 1] = -Math.sin((2 * Math.PI * k) / n); }
    this.zr = new Float64Array(n / 2);
    this.zi = new Float64Array(n / 2);
  }

  /** X[k] of x[0 … n) into re[k], im[k], k = 0 … n/2 (arrays of at least n/2 + 1). */
  forward(x: Float64Array, re: Float64Array, im: Float64Array): void {
    const m = this.n / 2, rev = this.half.rev, zr = this.zr, zi = this.zi;
    // Even samples as real parts, odd ones as imaginary parts, placed in bit-reversed order.
    for (let i = 0; i < m; i++) { const r = rev[i]; zr[r] = x[2 * i]; zi[r] = x[2 * i + 1]; }
    this.half.run(zr, zi);
    this.splitStep(re, im);
  }

  /** Same as forward() for w[i]·(x[i] − mean): the windowed, mean-removed segment of Welch's method, in one load. */
  forwardWindowed(x: Float64Array, mean: number, w: Float64Array, re: Float64Array, im: Float64Array): void {
    const m = this.n / 2, rev = this.half.rev, zr = this.zr, zi = this.zi;
    for (let i = 0; i < m; i++) { const r = rev[i]; zr[r] = (x[2 * i] - mean) * w[2 * i]; zi[r] = (x[2 * i + 1] - mean) * w[2 * i + 1]; }
    this.half.run(zr, zi);
    this.splitStep(re, im);
  }

  // X[k] = E[k] + W^k·O[k], E = (Z[k] + conj Z[m−k])/2, O = (Z[k] − conj Z[m−k])/(2i), W = e^(−2πi/n); k and m − k together.
  private splitStep(re: Float64Array, im: Float64Array): void {
    const m = this.n / 2, zr = this.zr, zi = this.zi, tw = this.split;
    re[0] = zr[0] + zi[0]; im[0] = 0;
    re[m] = zr[0] - zi[0]; im[m] = 0;
    for (let k = 1; k <= m / 2; k++) {
      const j = m - k;
      const ar = zr[k], ai = zi[k], br = zr[j], bi = zi[j];
      const er = 0.5 * (ar + br), ei = 0.5 * (ai - bi); // E[k]
      const or = 0.5 * (ai + bi), oi = -0.5 * (ar - br); // O[k]
      const c = tw[2 * k], s = tw[2 * k + 1];
      const wr = c * or - s * oi, wi = c * oi + s * or; // W^k·O[k]
      re[k] = er + wr; im[k] = ei + wi;
      // X[m−k] = conj(E[k]) − conj(W^k·O[k])·… : E[m−k] = conj E[k], O[m−k] = conj O[k], W^(m−k) = −conj W^k.
      re[j] = er - wr; im[j] = -ei + wi;
    }
  }
}

/** Twiddles of every radix-4 stage of a length-n transform, per stage of span h: cos and −sin of 2π·r·j/(4h), r = 1, 2, 3, as six rows of h (the layout stages/dsp/fft-simd.c reads two at a time). */
export function stageTwiddles(n: number): Float64Array {
  const rows: number[] = [];
  for (let h = Math.log2(n) % 2 ? 2 : 4; h < n; h *= 4) {
    for (let r = 1; r <= 3; r++) {
      for (let j = 0; j < h; j++) rows.push(Math.cos((2 * Math.PI * r * j) / (4 * h)));
      for (let j = 0; j < h; j++) rows.push(-Math.sin((2 * Math.PI * r * j) / (4 * h)));
    }
  }
  return Float64Array.from(rows);
}
