// npm run bench:low-bands: the low octave bands' spectrum, decimated (every 16th sample of the low-passed channel, 4096-point
// Welch at fs/16), beside a 65,536-point Welch at fs, which resolves as finely, and the shared 4096-point one. 20 s of 48 kHz
// noise, one channel, pushed in chunks of 65,536 as the reduction reads them; CPU time per input sample, best of seven runs
// (so other processes on the shared machine count less).
import { Decimator } from '../stages/dsp/decimate.js';
import { Welch, type WelchOptions } from '../stages/dsp/welch.js';

const FS = 48000, SECONDS = 20, CHUNK = 65536, RUNS = 7;

/** Nanoseconds of CPU time per sample: the best of RUNS runs of `run` over n samples. */
function nsPerSample(n: number, run: () => void): number {
  let best = Infinity;
  for (let r = 0; r < RUNS; r++) {
    const t = process.cpuUsage();
    run();
    const u = process.cpuUsage(t);
    best = Math.min(best, ((u.user + u.system) * 1000) / n);
  }
  return best;
}

// Uniform noise from a linear congruential generator (Numerical Recipes' constants), so every run sees the same samples.
function noise(n: number): Float64Array {
  const x = new Float64Array(n);
  let s = 12345;
  for (let i = 0; i < n; i++) { s = (Math.imul(s, 1664525) + 1013904223) >>> 0; x[i] = s / 4294967296 - 0.5; }
  return x;
}

const x = noise(FS * SECONDS);
const chunks = Array.from({ length: Math.ceil(x.length / CHUNK) }, (_, i) => x.subarray(i * CHUNK, (i + 1) * CHUNK));
const hann = (segment: number): WelchOptions => ({ segment, overlap: 0.5, window: 'hann' });

const welchOf = (segment: number) => () => {
  const w = new Welch(FS, hann(segment));
  for (const c of chunks) w.push(c);
  w.result();
};

const decimatedOf = (factor: number, segment: number) => () => {
  const d = new Decimator(FS, factor), w = new Welch(FS / factor, hann(segment)), out = new Float64Array(d.outputsAtMost(CHUNK));
  for (const c of chunks) { const { length } = d.push(c, out); w.push(out.subarray(0, length)); }
  w.result();
};

const decimatorOnly = (factor: number) => () => {
  const d = new Decimator(FS, factor), out = new Float64Array(d.outputsAtMost(CHUNK));
  for (const c of chunks) d.push(c, out);
};

const cases: [string, () => void][] = [
  ['Welch 4096 at 48 kHz (the shared spectrum)', welchOf(4096)],
  ['Welch 65536 at 48 kHz', welchOf(65536)],
  ['decimated by 16, Welch 4096 at 3 kHz', decimatedOf(16, 4096)],
  ['  of which the decimator', decimatorOnly(16)],
];
console.log(`${SECONDS} s of ${FS / 1000} kHz noise, one channel, chunks of ${CHUNK}; ns a sample, best of ${RUNS}`);
for (const [name, run] of cases) console.log(`${name.padEnd(48)} ${nsPerSample(x.length, run).toFixed(2)}`);
