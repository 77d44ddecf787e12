// npm run bench:fft: the FFT candidates side by side, on the two transforms the reduction runs most: a real 4096-point
// transform (a Welch segment) and a complex 8192-point one (an envelope block). Speed as CPU time per transform (best of
// several timed batches, so other processes on a shared machine count less), precision against the DFT sum.
import FFT from 'fft.js';
import PFFFT from '@echogarden/pffft-wasm/simd';
import KissFFT from '@echogarden/kissfft-wasm';
import { ComplexFft, RealFft } from '../stages/dsp/fft.js';
import { complexDft, realDft } from '../stages/dsp/fft-simd.js';

interface Candidate { name: string; precision: string; real(x: Float64Array, re: Float64Array, im: Float64Array): void; complex(re: Float64Array, im: Float64Array): void }

const REAL_N = 4096, COMPLEX_N = 8192;

/** CPU microseconds per call: the best of `batches` batches of at least ~40 ms each. */
function cpuMicroseconds(f: () => void, batches = 7): number {
  let reps = 1;
  for (;;) { const t = process.cpuUsage(); for (let i = 0; i < reps; i++) f(); const u = process.cpuUsage(t); if (u.user + u.system > 40_000) break; reps *= 2; }
  let best = Infinity;
  for (let b = 0; b < batches; b++) {
    const t = process.cpuUsage();
    for (let i = 0; i < reps; i++) f();
    const u = process.cpuUsage(t);
    best = Math.min(best, (u.user + u.system) / reps);
  }
  return best;
}

/** The DFT by its defining sum, the reference every candidate is held against. */
function dftSum(re: Float64Array, im: Float64Array, bins: number): [Float64Array, Float64Array] {
  const n = re.length, cos = Float64Array.from({ length: n }, (_, i) => Math.cos((2 * Math.PI * i) / n)), sin = Float64Array.from({ length: n }, (_, i) => Math.sin((2 * Math.PI * i) / n));
  const or = new Float64Array(bins), oi = new Float64Array(bins);
  for (let k = 0; k < bins; k++) {
    let sr = 0, si = 0;
    for (let m = 0, p = 0; m < n; m++, p = (p + k) % n) { sr += re[m] * cos[p] + im[m] * sin[p]; si += im[m] * cos[p] - re[m] * sin[p]; }
    or[k] = sr; oi[k] = si;
  }
  return [or, oi];
}

function fftJs(): Candidate {
  const real = new FFT(REAL_N), ro = real.createComplexArray();
  const cplx = new FFT(COMPLEX_N), ci = cplx.createComplexArray(), co = cplx.createComplexArray();
  return {
    name: 'fft.js 4.0.4 (radix-4, JavaScript)', precision: 'float64',
    real(x, re, im) { real.realTransform(ro, x); for (let k = 0; k <= REAL_N / 2; k++) { re[k] = ro[2 * k]; im[k] = ro[2 * k + 1]; } },
    complex(re, im) { for (let i = 0; i < COMPLEX_N; i++) { ci[2 * i] = re[i]; ci[2 * i + 1] = im[i]; } cplx.transform(co, ci); for (let i = 0; i < COMPLEX_N; i++) { re[i] = co[2 * i]; im[i] = co[2 * i + 1]; } },
  };
}

function ownJs(): Candidate {
  const real = new RealFft(REAL_N), cplx = new ComplexFft(COMPLEX_N), cr = new Float64Array(COMPLEX_N), ci = new Float64Array(COMPLEX_N);
  return {
    name: 'own, JavaScript (stages/dsp/fft.ts)', precision: 'float64',
    real: (x, re, im) => real.forward(x, re, im),
    complex(re, im) { for (let i = 0; i < COMPLEX_N; i++) { cr[cplx.rev[i]] = re[i]; ci[cplx.rev[i]] = im[i]; } cplx.run(cr, ci); re.set(cr); im.set(ci); },
  };
}

function ownSimd(): Candidate {
  return { name: 'own, WebAssembly SIMD (stages/dsp/fft-simd.c)', precision: 'float64', real: realDft, complex: complexDft };
}

async function pffft(): Promise<Candidate> {
  const m = await PFFFT();
  const rs = m._pffft_new_setup(REAL_N, 0), cs = m._pffft_new_setup(COMPLEX_N, 1);
  const buf = (floats: number) => m._pffft_aligned_malloc(floats * 4);
  const rin = buf(REAL_N), rout = buf(REAL_N), rwork = buf(REAL_N), cin = buf(2 * COMPLEX_N), cout = buf(2 * COMPLEX_N), cwork = buf(2 * COMPLEX_N);
  const f32 = (at: number, n: number) => new Float32Array(m.HEAPF32.buffer, at, n);
  return {
    name: 'PFFFT (@echogarden/pffft-wasm 0.4.2, SIMD)', precision: 'float32',
    real(x, re, im) {
      f32(rin, REAL_N).set(x);
      m._pffft_transform_ordered(rs, rin, rout, rwork, 0);
      // Ordered real output: DC and Nyquist share the first pair.
      const o = f32(rout, REAL_N);
      re[0] = o[0]; im[0] = 0; re[REAL_N / 2] = o[1]; im[REAL_N / 2] = 0;
      for (let k = 1; k < REAL_N / 2; k++) { re[k] = o[2 * k]; im[k] = o[2 * k + 1]; }
    },
    complex(re, im) {
      const i = f32(cin, 2 * COMPLEX_N);
      for (let k = 0; k < COMPLEX_N; k++) { i[2 * k] = re[k]; i[2 * k + 1] = im[k]; }
      m._pffft_transform_ordered(cs, cin, cout, cwork, 0);
      const o = f32(cout, 2 * COMPLEX_N);
      for (let k = 0; k < COMPLEX_N; k++) { re[k] = o[2 * k]; im[k] = o[2 * k + 1]; }
    },
  };
}

async function kissfft(): Promise<Candidate> {
  const m = await KissFFT();
  const rcfg = m._kiss_fftr_alloc(REAL_N, 0, 0, 0), ccfg = m._kiss_fft_alloc(COMPLEX_N, 0, 0, 0);
  const rin = m._malloc(REAL_N * 4), rout = m._malloc((REAL_N + 2) * 4), cin = m._malloc(COMPLEX_N * 8), cout = m._malloc(COMPLEX_N * 8);
  const f32 = (at: number, n: number) => new Float32Array(m.HEAPF32.buffer, at, n);
  return {
    name: 'KISS FFT (@echogarden/kissfft-wasm 0.2.0)', precision: 'float32',
    real(x, re, im) {
      f32(rin, REAL_N).set(x);
      m._kiss_fftr(rcfg, rin, rout);
      const o = f32(rout, REAL_N + 2);
      for (let k = 0; k <= REAL_N / 2; k++) { re[k] = o[2 * k]; im[k] = o[2 * k + 1]; }
    },
    complex(re, im) {
      const i = f32(cin, 2 * COMPLEX_N);
      for (let k = 0; k < COMPLEX_N; k++) { i[2 * k] = re[k]; i[2 * k + 1] = im[k]; }
      m._kiss_fft(ccfg, cin, cout);
      const o = f32(cout, 2 * COMPLEX_N);
      for (let k = 0; k < COMPLEX_N; k++) { re[k] = o[2 * k]; im[k] = o[2 * k + 1]; }
    },
  };
}

const x = Float64Array.from({ length: REAL_N }, (_, i) => Math.sin(0.1 * i) + 0.5 * Math.sin(1.7 * i + 0.3) + ((i * 7919) % 101) / 101);
const zr = Float64Array.from({ length: COMPLEX_N }, (_, i) => Math.cos(0.05 * i) + ((i * 104729) % 97) / 97);
const zi = Float64Array.from({ length: COMPLEX_N }, (_, i) => Math.sin(0.31 * i));
const [realRe, realIm] = dftSum(x, new Float64Array(REAL_N), REAL_N / 2 + 1);
const [cRe, cIm] = dftSum(zr, zi, COMPLEX_N);
const relError = (re: Float64Array, im: Float64Array, wr: Float64Array, wi: Float64Array) => {
  let e = 0, s = 0;
  for (let k = 0; k < wr.length; k++) { e = Math.max(e, Math.hypot(re[k] - wr[k], im[k] - wi[k])); s = Math.max(s, Math.hypot(wr[k], wi[k])); }
  return e / s;
};

process.stdout.write(`FFT candidates: real ${REAL_N}-point and complex ${COMPLEX_N}-point transforms, Node ${process.version}\n`);
process.stdout.write(`${'candidate'.padEnd(48)} ${'precision'.padEnd(9)} ${`real ${REAL_N} µs`.padStart(14)} ${`complex ${COMPLEX_N} µs`.padStart(17)} ${'max error / peak'.padStart(17)}\n`);
for (const c of [fftJs(), ownJs(), ownSimd(), await pffft(), await kissfft()]) {
  const re = new Float64Array(REAL_N / 2 + 1), im = new Float64Array(REAL_N / 2 + 1);
  c.real(x, re, im);
  const cr = zr.slice(), ci = zi.slice();
  c.complex(cr, ci);
  const error = Math.max(relError(re, im, realRe, realIm), relError(cr, ci, cRe, cIm));
  const wr = zr.slice(), wi = zi.slice();
  const realUs = cpuMicroseconds(() => c.real(x, re, im));
  const complexUs = cpuMicroseconds(() => { wr.set(zr); wi.set(zi); c.complex(wr, wi); });
  process.stdout.write(`${c.name.padEnd(48)} ${c.precision.padEnd(9)} ${realUs.toFixed(1).padStart(14)} ${complexUs.toFixed(1).padStart(17)} ${error.toExponential(1).padStart(17)}\n`);
}
