// Double-precision FFT kernels for WebAssembly with 128-bit SIMD (two doubles a lane pair), built by
// scripts/build-fft-simd.ts with clang into stages/dsp/fft-simd.wasm.ts. The plans (bit reversal, twiddles) are
// made in TypeScript (stages/dsp/fft-simd.ts) and passed in as pointers; nothing here allocates.
//
// Complex transform: iterative radix-4 decimation in time over bit-reversed input (Cooley & Tukey, Math. Comp. 19,
// 1965), radix-2 first stage when log2 n is odd; the same butterflies as stages/dsp/fft.ts, two at a time.
// Real transform: a complex transform of half the length and a split step (Sorensen et al., IEEE Trans. ASSP 35(6), 1987).
#include <wasm_simd128.h>

typedef struct {
  int n;               // complex length
  int radix2_first;    // log2 n odd
  const unsigned *rev; // bit reversal of 0 … n−1
  const double *tw;    // per radix-4 stage of span h: c1[h] s1[h] c2[h] s2[h] c3[h] s3[h] (cos, −sin of 2π·r·j/4h)
} cplan;

typedef struct {
  int n;               // real length; the half plan has n/2
  cplan half;
  const double *split; // cos, −sin of 2πk/n for k ≤ n/4, interleaved
  double *zr, *zi;     // scratch of n/2
} rplan;

#define LD(p) wasm_v128_load(p)
#define ST(p, v) wasm_v128_store(p, v)
#define ADD wasm_f64x2_add
#define SUB wasm_f64x2_sub
#define MUL wasm_f64x2_mul

static void first_stage(int n, int radix2, double *re, double *im) {
  if (radix2) {
    for (int i = 0; i < n; i += 2) {
      double ar = re[i], ai = im[i], br = re[i + 1], bi = im[i + 1];
      re[i] = ar + br; im[i] = ai + bi; re[i + 1] = ar - br; im[i + 1] = ai - bi;
    }
    return;
  }
  // Radix-4 of span 1: blocks hold D0, D2, D1, D3 (bit-reversed input), no twiddles.
  for (int g = 0; g < n; g += 4) {
    double t0r = re[g], t0i = im[g], t2r = re[g + 1], t2i = im[g + 1], t1r = re[g + 2], t1i = im[g + 2], t3r = re[g + 3], t3i = im[g + 3];
    double ar = t0r + t2r, ai = t0i + t2i, br = t0r - t2r, bi = t0i - t2i;
    double cr = t1r + t3r, ci = t1i + t3i, dr = t1r - t3r, di = t1i - t3i;
    re[g] = ar + cr; im[g] = ai + ci;
    re[g + 1] = br + di; im[g + 1] = bi - dr;
    re[g + 2] = ar - cr; im[g + 2] = ai - ci;
    re[g + 3] = br - di; im[g + 3] = bi + dr;
  }
}

// One radix-4 stage of span h ≥ 2: t_r = W^(r·j)·D_r[j]; U[j + q·h] = Σ_r (−i)^(r·q)·t_r. Two values of j at a time.
static void stage4(int n, int h, const double *tw, double *re, double *im) {
  const double *c1 = tw, *s1 = tw + h, *c2 = tw + 2 * h, *s2 = tw + 3 * h, *c3 = tw + 4 * h, *s3 = tw + 5 * h;
  for (int g = 0; g < n; g += 4 * h) {
    double *r0 = re + g, *r2 = r0 + h, *r1 = r2 + h, *r3 = r1 + h;
    double *i0 = im + g, *i2 = i0 + h, *i1 = i2 + h, *i3 = i1 + h;
    for (int j = 0; j < h; j += 2) {
      v128_t C1 = LD(c1 + j), S1 = LD(s1 + j), C2 = LD(c2 + j), S2 = LD(s2 + j), C3 = LD(c3 + j), S3 = LD(s3 + j);
      v128_t t0r = LD(r0 + j), t0i = LD(i0 + j);
      v128_t x1r = LD(r1 + j), x1i = LD(i1 + j), x2r = LD(r2 + j), x2i = LD(i2 + j), x3r = LD(r3 + j), x3i = LD(i3 + j);
      v128_t t1r = SUB(MUL(C1, x1r), MUL(S1, x1i)), t1i = ADD(MUL(C1, x1i), MUL(S1, x1r));
      v128_t t2r = SUB(MUL(C2, x2r), MUL(S2, x2i)), t2i = ADD(MUL(C2, x2i), MUL(S2, x2r));
      v128_t t3r = SUB(MUL(C3, x3r), MUL(S3, x3i)), t3i = ADD(MUL(C3, x3i), MUL(S3, x3r));
      v128_t ar = ADD(t0r, t2r), ai = ADD(t0i, t2i), br = SUB(t0r, t2r), bi = SUB(t0i, t2i);
      v128_t cr = ADD(t1r, t3r), ci = ADD(t1i, t3i), dr = SUB(t1r, t3r), di = SUB(t1i, t3i);
      ST(r0 + j, ADD(ar, cr)); ST(i0 + j, ADD(ai, ci));
      ST(r2 + j, ADD(br, di)); ST(i2 + j, SUB(bi, dr));
      ST(r1 + j, SUB(ar, cr)); ST(i1 + j, SUB(ai, ci));
      ST(r3 + j, SUB(br, di)); ST(i3 + j, ADD(bi, dr));
    }
  }
}

// Every stage after the first.
static void later_stages(const cplan *p, double *re, double *im) {
  int n = p->n;
  const double *tw = p->tw;
  for (int h = p->radix2_first ? 2 : 4; h < n; h *= 4) {
    stage4(n, h, tw, re, im);
    tw += 6 * h;
  }
}

/** Forward complex transform in place: bit-reversed input, natural-order output. */
void cfft(const cplan *p, double *re, double *im) {
  first_stage(p->n, p->radix2_first, re, im);
  later_stages(p, re, im);
}

// X[k] = E[k] + W^k·O[k] and X[m−k] from the half-length transform in zr, zi; k = 0 … m/2 (m = n/2). Two values of k at a
// time (k, k + 1 as lanes; their partners m − k, m − k − 1 read and written with the lanes swapped), the same operations
// on each as one at a time.
static void split_step(const rplan *p, double *re, double *im) {
  int m = p->n / 2;
  const double *zr = p->zr, *zi = p->zi, *tw = p->split;
  re[0] = zr[0] + zi[0]; im[0] = 0;
  re[m] = zr[0] - zi[0]; im[m] = 0;
  int k = 1;
  const v128_t half = wasm_f64x2_splat(0.5), minus_half = wasm_f64x2_splat(-0.5);
#define SWAP(v) wasm_i64x2_shuffle(v, v, 1, 0)
  for (; k + 1 <= m / 2; k += 2) {
    int j = m - k - 1; // the partners' lower place
    v128_t ar = LD(zr + k), ai = LD(zi + k), br = SWAP(LD(zr + j)), bi = SWAP(LD(zi + j));
    v128_t t0 = LD(tw + 2 * k), t1 = LD(tw + 2 * k + 2);
    v128_t c = wasm_i64x2_shuffle(t0, t1, 0, 2), s = wasm_i64x2_shuffle(t0, t1, 1, 3);
    v128_t er = MUL(half, ADD(ar, br)), ei = MUL(half, SUB(ai, bi));
    v128_t or = MUL(half, ADD(ai, bi)), oi = MUL(minus_half, SUB(ar, br));
    v128_t wr = SUB(MUL(c, or), MUL(s, oi)), wi = ADD(MUL(c, oi), MUL(s, or));
    ST(re + k, ADD(er, wr)); ST(im + k, ADD(ei, wi));
    // Lane 1 (k + 1) is written after lane 0 (k) at the middle, where m − (k + 1) = k + 1, as one at a time would.
    ST(re + j, SWAP(SUB(er, wr))); ST(im + j, SWAP(ADD(wasm_f64x2_neg(ei), wi)));
  }
#undef SWAP
  for (; k <= m / 2; k++) {
    int j = m - k;
    double ar = zr[k], ai = zi[k], br = zr[j], bi = zi[j];
    double er = 0.5 * (ar + br), ei = 0.5 * (ai - bi);
    double or = 0.5 * (ai + bi), oi = -0.5 * (ar - br);
    double c = tw[2 * k], s = tw[2 * k + 1];
    double wr = c * or - s * oi, wi = c * oi + s * or;
    re[k] = er + wr; im[k] = ei + wi;
    re[j] = er - wr; im[j] = -ei + wi;
  }
}

/** X[k], k = 0 … n/2, of the real x[0 … n). */
void rfft(const rplan *p, const double *x, double *re, double *im) {
  int m = p->n / 2;
  const unsigned *rev = p->half.rev;
  for (int i = 0; i < m; i++) { unsigned r = rev[i]; p->zr[r] = x[2 * i]; p->zi[r] = x[2 * i + 1]; }
  cfft(&p->half, p->zr, p->zi);
  split_step(p, re, im);
}

// acc[k] += |X[k]|², X the transform of w·(x − mean), k = 0 … n/2.
static void periodogram_of(const rplan *p, const double *x, double mean, const double *w, double *re, double *im, double *acc) {
  int m = p->n / 2;
  const unsigned *rev = p->half.rev;
  const v128_t mu = wasm_f64x2_splat(mean);
  for (int i = 0; i < m; i++) { // x[2i] and x[2i + 1] as the lanes of one pair
    unsigned r = rev[i];
    v128_t y = MUL(SUB(LD(x + 2 * i), mu), LD(w + 2 * i));
    p->zr[r] = wasm_f64x2_extract_lane(y, 0);
    p->zi[r] = wasm_f64x2_extract_lane(y, 1);
  }
  cfft(&p->half, p->zr, p->zi);
  split_step(p, re, im);
  for (int k = 0; k <= m; k++) acc[k] += re[k] * re[k] + im[k] * im[k];
}

/** Welch's modified periodogram: acc[k] += |X[k]|², X the transform of w·(x − mean), the segment's mean removed
 *  (detrend 'constant'), k = 0 … n/2. */
void periodogram_add(const rplan *p, const double *x, const double *w, double *re, double *im, double *acc) {
  double mean = 0;
  for (int i = 0; i < p->n; i++) mean += x[i]; // in order, as a plain loop would: no reassociation
  periodogram_of(p, x, mean / p->n, w, re, im, acc);
}

/** Welch's method over a stretch of the stream: periodogram_add for every whole segment of x[0 … length) that starts at a
 *  multiple of hop, in order; returns how many. Each segment's sum is added in order, as periodogram_add adds it, but the
 *  sums of eight segments run side by side, so the processor overlaps their chains of additions. */
int welch_add(const rplan *p, const double *x, int length, int hop, const double *w, double *re, double *im, double *acc) {
  int n = p->n, count = length < n ? 0 : (length - n) / hop + 1, s = 0;
  for (; s + 8 <= count; s += 8) {
    const double *x0 = x + s * hop, *x1 = x0 + hop, *x2 = x1 + hop, *x3 = x2 + hop, *x4 = x3 + hop, *x5 = x4 + hop, *x6 = x5 + hop, *x7 = x6 + hop;
    double m0 = 0, m1 = 0, m2 = 0, m3 = 0, m4 = 0, m5 = 0, m6 = 0, m7 = 0;
    for (int i = 0; i < n; i++) { m0 += x0[i]; m1 += x1[i]; m2 += x2[i]; m3 += x3[i]; m4 += x4[i]; m5 += x5[i]; m6 += x6[i]; m7 += x7[i]; }
    periodogram_of(p, x0, m0 / n, w, re, im, acc); periodogram_of(p, x1, m1 / n, w, re, im, acc);
    periodogram_of(p, x2, m2 / n, w, re, im, acc); periodogram_of(p, x3, m3 / n, w, re, im, acc);
    periodogram_of(p, x4, m4 / n, w, re, im, acc); periodogram_of(p, x5, m5 / n, w, re, im, acc);
    periodogram_of(p, x6, m6 / n, w, re, im, acc); periodogram_of(p, x7, m7 / n, w, re, im, acc);
  }
  for (; s < count; s++) periodogram_add(p, x + s * hop, w, re, im, acc);
  return count;
}

/** Filtered analytic signal of a block: z = IDFT(g·DFT(x)) with complex gains g[k] (re, im interleaved) for k = 0 … n/2
 *  and none above (negative frequencies); writes Re z and |z| for samples [from, to). The inverse runs as the forward
 *  transform of the conjugate (cp: complex plan of length n; sr, si: scratch of n). g carries the 1/n of the inverse. */
void analytic(const rplan *rp, const cplan *cp, const double *x, const double *g, double *re, double *im,
              double *sr, double *si, int from, int to, double *out_re, double *out_abs) {
  int n = cp->n, half = n / 2;
  rfft(rp, x, re, im);
  const unsigned *rev = cp->rev;
  // The inverse's input is conj(g·X) for k ≤ n/2 and zero above. In bit-reversed order the zeros are the odd places
  // but place 1 (k = n/2), so the first stage is written straight from the even places, with no zeros stored.
#define S(k, r_, i_) do { double gr = g[2 * (k)], gi = g[2 * (k) + 1]; r_ = gr * re[k] - gi * im[k]; i_ = -(gr * im[k] + gi * re[k]); } while (0)
  double nr, ni;
  S(half, nr, ni);
  if (cp->radix2_first) {
    for (int i = 0; i < n; i += 2) {
      double ar, ai;
      S(rev[i], ar, ai);
      double br = i == 0 ? nr : 0, bi = i == 0 ? ni : 0;
      sr[i] = ar + br; si[i] = ai + bi; sr[i + 1] = ar - br; si[i + 1] = ai - bi;
    }
  } else {
    for (int g4 = 0; g4 < n; g4 += 4) {
      double t0r, t0i, t1r, t1i;
      S(rev[g4], t0r, t0i);
      S(rev[g4 + 2], t1r, t1i);
      double t2r = g4 == 0 ? nr : 0, t2i = g4 == 0 ? ni : 0; // D2 of the first group is place 1
      double ar = t0r + t2r, ai = t0i + t2i, br = t0r - t2r, bi = t0i - t2i;
      sr[g4] = ar + t1r; si[g4] = ai + t1i;
      sr[g4 + 1] = br + t1i; si[g4 + 1] = bi - t1r;
      sr[g4 + 2] = ar - t1r; si[g4 + 2] = ai - t1i;
      sr[g4 + 3] = br - t1i; si[g4 + 3] = bi + t1r;
    }
  }
#undef S
  later_stages(cp, sr, si);
  // z = conj of the result: Re z = sr, |z| = |result|.
  int i = from;
  for (; i + 1 < to; i += 2) {
    v128_t a = wasm_v128_load(sr + i), b = wasm_v128_load(si + i);
    wasm_v128_store(out_re + (i - from), a);
    wasm_v128_store(out_abs + (i - from), wasm_f64x2_sqrt(ADD(MUL(a, a), MUL(b, b))));
  }
  for (; i < to; i++) { double a = sr[i], b = si[i]; out_re[i - from] = a; out_abs[i - from] = __builtin_sqrt(a * a + b * b); }
}

// The true peak's scan of x[from, to) (ITU-R BS.1770-4 Annex 2; TruePeak.scan in stages/dsp/true-peak.ts): the same
// decisions and the same products added in the same order, so the same numbers. Three steps:
// 1. Candidates are gathered four samples at a time (f64x2 compares to a bitmask) against the threshold the running sample
//    peak sets (never above TruePeak's, so none is missed); samples that raise the sample peak are taken one by one.
// 2. Each candidate's four points (i ∓ 1/2, i ∓ 1/4) are estimated in single precision, all four in one f32x4 sum.
// 3. The candidates are taken in order against TruePeak's threshold. A candidate whose estimate, plus a bound on the
//    estimate's error, does not exceed the running true peak cannot raise it, so its points are not made (this changes no
//    decision: a point at most the running true peak leaves it as it is); the others get their half-sample points, and the
//    quarter-sample points where those could lie beside the true peak, in double precision as TruePeak makes them.
// Error of the estimate (Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed., 3.1): rounding x and the taps to
// float and summing 24 products in float is off by at most (2u + γ₂₅)·Σ|h|·max|x| ≈ 1.6·10⁻⁶·Σ|h|·max|x| (u = 2⁻²⁴); the
// bound used is 10⁻⁵·Σ|h|·max|x|, with max|x| over the stretch the candidates' supports cover. A stretch holding a value that
// is not finite or beyond 10³⁰ (float's range) is not estimated: each of its candidates gets its points made.
// The taps come as 24 pairs (lane 0's, lane 1's): lane 0 sums from x[i − 12 + j], lane 1 from x[i − 11 + j]. peaks holds the
// guard, the sample peak and the true peak (in and out); cand (ints), peak_at and estimate are scratch of to − from each, xf
// (floats) of the block's length.
static double magnitude(double y) { return y < __builtin_inf() && y > -__builtin_inf() ? __builtin_fabs(y) : 0; }
static double point_pair(const double *x, int i, const double *taps) {
  const double *p = x + i - 12;
  v128_t s = wasm_f64x2_splat(0);
  for (int j = 0; j < 24; j++) s = ADD(s, MUL(LD(taps + 2 * j), LD(p + j)));
  double a = magnitude(wasm_f64x2_extract_lane(s, 0)), b = magnitude(wasm_f64x2_extract_lane(s, 1));
  return b > a ? b : a;
}

// Whether the samples x[i], x[i + 1] (v, |v| = a) are candidates: at least the threshold, a local maximum of |x|, and not on a
// flat top of three. p, q are the pairs before and after (x[i − 2 …], x[i + 2 …]), ap, aq their magnitudes.
static v128_t candidates(v128_t p, v128_t v, v128_t q, v128_t ap, v128_t a, v128_t aq, v128_t threshold) {
  v128_t l = wasm_i64x2_shuffle(p, v, 1, 2), r = wasm_i64x2_shuffle(v, q, 1, 2);
  v128_t al = wasm_i64x2_shuffle(ap, a, 1, 2), ar = wasm_i64x2_shuffle(a, aq, 1, 2);
  v128_t ok = wasm_v128_andnot(wasm_f64x2_ge(a, threshold), wasm_v128_or(wasm_f64x2_lt(a, al), wasm_f64x2_lt(a, ar)));
  v128_t el = wasm_f64x2_eq(v, l), er = wasm_f64x2_eq(v, r);
  v128_t flat = wasm_v128_or(wasm_v128_and(el, wasm_v128_or(er, wasm_f64x2_eq(v, p))), wasm_v128_and(er, wasm_f64x2_eq(v, q)));
  return wasm_v128_andnot(ok, flat);
}

static int gather(const double *x, int from, int to, int first, double guard, double *peak_io, double top, int *cand, double *peak_at) {
  double peak = *peak_io, threshold = guard * (top > peak ? top : peak);
  int m = 0, i = from;
  for (; i < to; ) {
    if (i >= first && i + 4 <= to) {
      v128_t v = LD(x + i), w = LD(x + i + 2), a = wasm_f64x2_abs(v), b = wasm_f64x2_abs(w), pk = wasm_f64x2_splat(peak);
      if (!wasm_v128_any_true(wasm_v128_or(wasm_f64x2_gt(a, pk), wasm_f64x2_gt(b, pk)))) {
        v128_t t = wasm_f64x2_splat(threshold), p = LD(x + i - 2), q = LD(x + i + 4), ap = wasm_f64x2_abs(p), aq = wasm_f64x2_abs(q);
        int bits = wasm_i64x2_bitmask(candidates(p, v, w, ap, a, b, t)) | wasm_i64x2_bitmask(candidates(v, w, q, a, b, aq, t)) << 2;
        cand[m] = i; peak_at[m] = peak; m += bits & 1;
        cand[m] = i + 1; peak_at[m] = peak; m += (bits >> 1) & 1;
        cand[m] = i + 2; peak_at[m] = peak; m += (bits >> 2) & 1;
        cand[m] = i + 3; peak_at[m] = peak; m += bits >> 3;
        i += 4;
        continue;
      }
    }
    double v = x[i], a = v < 0 ? -v : v;
    int at = i++;
    if (a > peak) {
      if (!(a < __builtin_inf())) continue;
      peak = a;
      if (guard * a > threshold) threshold = guard * a;
    }
    if (!(a >= threshold) || at < first) continue;
    double l = x[at - 1], r = x[at + 1];
    if (a < __builtin_fabs(l) || a < __builtin_fabs(r)) continue;
    if ((v == l && (v == r || v == x[at - 2])) || (v == r && v == x[at + 2])) continue;
    cand[m] = at; peak_at[m] = peak; m++;
  }
  *peak_io = peak;
  return m;
}

// The largest |estimate| of the four points, from the float taps (i − 1/2, i + 1/2, i − 1/4, i + 1/4 as lanes) and x as floats.
static double estimate(v128_t s) {
  v128_t a = wasm_f32x4_abs(s);
  a = wasm_f32x4_pmax(a, wasm_i32x4_shuffle(a, a, 2, 3, 0, 1));
  a = wasm_f32x4_pmax(a, wasm_i32x4_shuffle(a, a, 1, 0, 3, 2));
  return wasm_f32x4_extract_lane(a, 0);
}

void true_peak_scan(const double *x, int from, int to, int first, double *peaks, const double *taps_half,
                    const double *taps_quarter, int *cand, double *peak_at, double *est, float *xf) {
  const double guard = peaks[0];
  double peak = peaks[1], top = peaks[2] > peak ? peaks[2] : peak;
  int m = gather(x, from, to, first, guard, &peak, top, cand, peak_at);
  if (m) {
    float taps[96] __attribute__((aligned(16)));
    double sum_half = 0, sum_before = 0, sum_after = 0;
    for (int j = 0; j < 24; j++) {
      taps[4 * j] = (float)taps_half[2 * j]; taps[4 * j + 1] = (float)taps_half[2 * j + 1];
      taps[4 * j + 2] = (float)taps_quarter[2 * j]; taps[4 * j + 3] = (float)taps_quarter[2 * j + 1];
      sum_half += __builtin_fabs(taps_half[2 * j]); sum_before += __builtin_fabs(taps_quarter[2 * j]); sum_after += __builtin_fabs(taps_quarter[2 * j + 1]);
    }
    double gain = sum_half > sum_before ? sum_half : sum_before;
    if (sum_after > gain) gain = sum_after;
    // x as floats over the candidates' supports, its largest magnitude, and whether every value there is finite.
    int lo = cand[0] - 12, hi = cand[m - 1] + 13, i = lo;
    v128_t mx = wasm_f64x2_splat(0), nonfinite = mx;
    for (; i + 4 <= hi; i += 4) {
      v128_t v = LD(x + i), w = LD(x + i + 2);
      mx = wasm_f64x2_pmax(mx, wasm_f64x2_pmax(wasm_f64x2_abs(v), wasm_f64x2_abs(w)));
      nonfinite = ADD(nonfinite, ADD(SUB(v, v), SUB(w, w))); // NaN once a value is not finite
      ST(xf + i, wasm_i32x4_shuffle(wasm_f32x4_demote_f64x2_zero(v), wasm_f32x4_demote_f64x2_zero(w), 0, 1, 4, 5));
    }
    double big = wasm_f64x2_extract_lane(mx, 0), big1 = wasm_f64x2_extract_lane(mx, 1);
    if (big1 > big) big = big1;
    big += wasm_f64x2_extract_lane(nonfinite, 0) + wasm_f64x2_extract_lane(nonfinite, 1);
    for (; i < hi; i++) { double a = __builtin_fabs(x[i]); big = a > big || a != a ? a : big; xf[i] = (float)x[i]; }
    const double slack = big < 1e30 ? 1e-5 * gain * big + 1e-30 : __builtin_inf();
    int k = 0;
    for (; k + 4 <= m; k += 4) {
      const float *p0 = xf + cand[k] - 12, *p1 = xf + cand[k + 1] - 12, *p2 = xf + cand[k + 2] - 12, *p3 = xf + cand[k + 3] - 12;
      v128_t s0 = wasm_f32x4_splat(0), s1 = s0, s2 = s0, s3 = s0;
      for (int j = 0; j < 24; j++) {
        v128_t t = LD(taps + 4 * j);
        s0 = wasm_f32x4_add(s0, wasm_f32x4_mul(t, wasm_v128_load64_splat(p0 + j)));
        s1 = wasm_f32x4_add(s1, wasm_f32x4_mul(t, wasm_v128_load64_splat(p1 + j)));
        s2 = wasm_f32x4_add(s2, wasm_f32x4_mul(t, wasm_v128_load64_splat(p2 + j)));
        s3 = wasm_f32x4_add(s3, wasm_f32x4_mul(t, wasm_v128_load64_splat(p3 + j)));
      }
      est[k] = estimate(s0) + slack; est[k + 1] = estimate(s1) + slack; est[k + 2] = estimate(s2) + slack; est[k + 3] = estimate(s3) + slack;
    }
    for (; k < m; k++) {
      const float *p = xf + cand[k] - 12;
      v128_t s = wasm_f32x4_splat(0);
      for (int j = 0; j < 24; j++) s = wasm_f32x4_add(s, wasm_f32x4_mul(LD(taps + 4 * j), wasm_v128_load64_splat(p + j)));
      est[k] = estimate(s) + slack;
    }
  }
  for (int k = 0; k < m; k++) {
    if (peak_at[k] > top) top = peak_at[k];
    double v = x[cand[k]], a = v < 0 ? -v : v;
    if (!(a >= guard * top) || est[k] <= top) continue;
    double h = point_pair(x, cand[k], taps_half);
    if (h > top) top = h;
    if (a + h >= (1 + guard) * top * (1 - 1e-3)) { double q = point_pair(x, cand[k], taps_quarter); if (q > top) top = q; }
  }
  peaks[1] = peak;
  peaks[2] = top > peak ? top : peak;
}
