// The envelope's filter-and-Hilbert blocks against scipy.signal (vectors by test/fixtures/make-dsp-vectors.py), and the
// WebAssembly transforms against the discrete Fourier transform's definition.
import { describe, expect, it } from 'vitest';
import { AnalyticFilter, analyticGains } from '../stages/dsp/analytic.js';
import { butterworthSos, slowestPoleRadius, type FilterSpec } from '../stages/dsp/butterworth.js';
import { complexDft, realDft } from '../stages/dsp/fft-simd.js';
import { ENVELOPE_BLOCK, ENVELOPE_RAMP } from '../stages/envelope.js';
import { inChunks, maxAbsDiff, testSignal } from './dsp-signals.js';
import { fixture, readJson } from './helpers.js';

const ref = readJson(fixture('dsp-vectors.json'));

describe('filtered analytic signal against scipy hilbert(sosfiltfilt(x))', () => {
  const fe = ref.filtered_envelope;
  const sos = butterworthSos(fe as FilterSpec, fe.fs);
  const reach = Math.ceil(Math.log(1e-14) / Math.log(slowestPoleRadius(sos))) + 1;
  const x = testSignal(fe.n, fe.fs);
  const cases: [string, number, number][] = [['the envelope stage\'s blocks', ENVELOPE_BLOCK, ENVELOPE_RAMP], ['short blocks, short ramps', 2048, 64], ['long blocks, long ramps', 16384, 2048]];
  it.each(cases)('%s: filtered signal within 1e-12, envelope within 1e-6 of its peak', (_, size, ramp) => {
    const re: number[] = [], abs: number[] = [];
    const a = new AnalyticFilter(() => analyticGains(size, fe.fs, sos, true), `test:${size}`, { size, context: ramp + reach, ramp, extension: 'odd' }, (r, e) => { re.push(...r); abs.push(...e); });
    inChunks(x, (c) => a.push(c), [1000, 37, 8192, 1, 65536]);
    a.finish();
    expect(abs.length).toBe(x.length);
    const at = (v: number[]) => fe.envelope.map((_: number, i: number) => v[fe.from + i * ref.stride]);
    const peak = Math.max(...fe.envelope);
    // scipy's record is five times the stored part, so its circular ends leave the stored middle alone.
    expect(maxAbsDiff(at(re), fe.filtered) / peak).toBeLessThan(1e-12);
    expect(maxAbsDiff(at(abs), fe.envelope) / peak).toBeLessThan(1e-6);
  });
});

describe('WebAssembly SIMD transforms against the DFT sum', () => {
  const dft = (re: Float64Array, im: Float64Array) => {
    const n = re.length, or = new Float64Array(n), oi = new Float64Array(n);
    for (let k = 0; k < n; k++) for (let m = 0; m < n; m++) {
      const a = (-2 * Math.PI * ((k * m) % n)) / n;
      or[k] += re[m] * Math.cos(a) - im[m] * Math.sin(a);
      oi[k] += re[m] * Math.sin(a) + im[m] * Math.cos(a);
    }
    return [or, oi];
  };
  it.each([4, 8, 32, 128, 512, 2048])('length %i, complex and real input', (n) => {
    const re = Float64Array.from({ length: n }, (_, i) => Math.sin(0.37 * i) + ((i * 7919) % 13) / 13);
    const im = Float64Array.from({ length: n }, (_, i) => Math.cos(1.3 * i));
    const [wr, wi] = dft(re, im);
    const cr = re.slice(), ci = im.slice();
    complexDft(cr, ci);
    const scale = Math.max(...wr.map(Math.abs));
    expect(Math.max(maxAbsDiff(cr, wr), maxAbsDiff(ci, wi)) / scale).toBeLessThan(1e-13);
    const [xr, xi] = dft(re, new Float64Array(n));
    const rr = new Float64Array(n / 2 + 1), ri = new Float64Array(n / 2 + 1);
    realDft(re, rr, ri);
    expect(Math.max(maxAbsDiff(rr, xr.subarray(0, n / 2 + 1)), maxAbsDiff(ri, xi.subarray(0, n / 2 + 1))) / scale).toBeLessThan(1e-13);
  });
});
