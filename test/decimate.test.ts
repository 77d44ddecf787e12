// The decimated spectrum (stages/dsp/decimate.ts, `decimatedSpectrum` in stages/spectrum.ts) held against scipy 1.10
// (test/fixtures/make-decimate-vectors.py): the same chain built from scipy.signal.lfilter, butter and sosfilt, then
// scipy.signal.welch; and scipy.signal.welch of the signal itself at 48 kHz with 65,536-point segments, which it stands in for.
import { describe, expect, it } from 'vitest';
import { Decimator, decimatorPower, lastHalving } from '../stages/dsp/decimate.js';
import { bandMeanSquare, type Psd, type WelchOptions } from '../stages/dsp/welch.js';
import { bandsOf, lowBandSpectrum } from '../stages/octave.js';
import { spectrumOf } from '../stages/spectrum.js';
import type { ChannelContext, Stage } from '../stages/stage.js';
import { fixture, readJson } from './helpers.js';

const ref = readJson(fixture('decimate-vectors.json'));
const FS: number = ref.fs, D: number = ref.decimation;
const HANN = { segment: ref.segment as number, overlap: 0.5, window: 'hann' as const };
const db = (r: number) => 10 * Math.log10(r);

// MurmurHash3's 32-bit finaliser of i + seed, to [-0.5, 0.5), plus the fixture's tones and offset.
function signal(n: number, seed: number): Float64Array {
  const x = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let h = (i + seed) >>> 0;
    h ^= h >>> 16; h = Math.imul(h, 0x85ebca6b) >>> 0; h ^= h >>> 13; h = Math.imul(h, 0xc2b2ae35) >>> 0; h ^= h >>> 16;
    const t = i / FS;
    x[i] = (h >>> 0) / 4294967296 - 0.5 + 0.3 * Math.sin(2 * Math.PI * 31.5 * t) + 0.1 * Math.sin(2 * Math.PI * 200 * t) + 0.2;
  }
  return x;
}

// A channel's products as a reduction holds them: every chunk goes to each, in the order they were made (the fused pass first).
function channel(notes: string[] = []): { ctx: ChannelContext; push: (x: Float64Array) => void } {
  const shared = new Map<string, Stage>();
  const ctx: ChannelContext = {
    name: 'x', quantity: 'acceleration', unit: 'm/s^2', sampleRate: FS, range: null, bits: null, maxFrequencyHz: null, stepSize: null, fullScale: null,
    declared: true, declaredDurationS: null, timeSteps: () => null, note: (m) => notes.push(m), addRow: () => {}, flag: () => {}, evidence: () => {},
    shared: <T extends Stage>(k: string, make: () => T) => (shared.get(k) ?? shared.set(k, make()).get(k)) as T,
  };
  return { ctx, push: (x) => { for (const s of shared.values()) s.push(x); } };
}

function decimatedPsd(x: Float64Array, chunk = 8191, notes: string[] = [], o: WelchOptions = HANN): Psd {
  const { ctx, push } = channel(notes);
  const s = spectrumOf(ctx, o, false, D);
  for (let at = 0; at < x.length; at += chunk) push(x.subarray(at, at + chunk));
  return s.psd()!;
}

describe('the decimated spectrum against scipy', () => {
  const x = signal(ref.seconds * FS, ref.seed);

  it('rebuilds the fixture signal', () => {
    for (let i = 0; i < 4; i++) {
      expect(x[i]).toBeCloseTo(ref.first[i], 12);
      expect(x[x.length - 4 + i]).toBeCloseTo(ref.last[i], 12);
    }
  });

  it('|H(f)|² of the decimator equals that of the chain scipy builds (lfilter stages, butter + sosfilt), to 1e-10', () => {
    const last = lastHalving(FS, D);
    for (const { f, power } of ref.power) expect(Math.abs(decimatorPower(f, FS, D, last) - power), `${f} Hz`).toBeLessThan(1e-10 * Math.max(power, 1e-6));
  });

  it('equals scipy.signal.welch of the same chain divided by its |H|², bin by bin up to fs/(4D), to 1e-9', () => {
    const psd = decimatedPsd(x);
    expect(psd.df).toBeCloseTo(FS / D / HANN.segment, 12);
    expect(psd.upTo).toBeCloseTo(FS / D / 6, 9);
    const peak = Math.max(...ref.chain);
    ref.chain.forEach((want: number, k: number) => expect(Math.abs(psd.density[k] - want), `bin ${k}`).toBeLessThan(1e-9 * want + 1e-13 * peak));
  });

  it('reads as scipy.signal.welch of the signal at 48 kHz with 65,536-point segments: bins within 0.05 dB, one-third-octave bands 25 to 400 Hz within 0.01 dB', () => {
    const psd = decimatedPsd(x);
    // Bin 0 is the mean removed by each segment's detrending; from bin 1 the two estimates share their bins (fs/65,536).
    for (let k = 1; k < ref.full_rate.length; k++) expect(Math.abs(db(psd.density[k] / ref.full_rate[k])), `bin ${k}`).toBeLessThan(0.05);
    const full: Psd = { density: Float64Array.from(ref.full_rate), df: FS / (D * HANN.segment), segments: 0, segment: D * HANN.segment, length: D * HANN.segment };
    for (const band of bandsOf(3, 25, 400)) {
      expect(Math.abs(db(bandMeanSquare(psd, band.lower, band.upper) / bandMeanSquare(full, band.lower, band.upper))), `${band.nominal} Hz`).toBeLessThan(0.01);
    }
  });

  it('whatever the chunks, the same outputs bit for bit', () => {
    const y = x.subarray(0, 100_000), whole = new Decimator(FS, D), out = new Float64Array(whole.outputsAtMost(y.length));
    const n = whole.push(y, out).length;
    for (const size of [1, 3, 16, 4097]) {
      const d = new Decimator(FS, D), got: number[] = [], buf = new Float64Array(d.outputsAtMost(size));
      for (let at = 0; at < y.length; at += size) {
        const { length } = d.push(y.subarray(at, at + size), buf);
        for (let i = 0; i < length; i++) got.push(buf[i]);
      }
      expect(got.length).toBe(n);
      expect(Float64Array.from(got)).toEqual(out.subarray(0, n));
    }
  });

  it('a tone the halvings fold onto 200 Hz reads at least 60 dB down there, as in scipy\'s chain', () => {
    const n = 4 * FS;
    for (const a of ref.aliases) {
      const tone = Float64Array.from({ length: n }, (_, i) => Math.sin((2 * Math.PI * a.tone * i) / FS));
      const left = bandMeanSquare(decimatedPsd(tone), 190, 210) / a.tone_ms;
      expect(db(left), `${a.tone} Hz`).toBeLessThan(-60);
      // Where scipy's chain leaves more than rounding, the same within 1 dB (undone by the |H|² scipy's figure lacks).
      if (a.band_ms / a.tone_ms > 1e-13) expect(Math.abs(db((left * a.tone_ms * decimatorPower(200, FS, D)) / a.band_ms)), `${a.tone} Hz`).toBeLessThan(1);
    }
  });
});

describe('the decimation the octave stage asks for', () => {
  // Its one-third-octave bands up to 315 Hz (upper edge 354.8 Hz, IEC 61260-1 base 10) need 65,536-sample periodograms at 48 kHz.
  it('every 16th sample at 48 and 25.6 kHz, every 8th at 12.8 kHz, each with 4096-point segments; fewer where a band would pass fs/(6D)', () => {
    const sets = [{ fraction: 1 as const, from: 31.5, to: 8000 }, { fraction: 3 as const, from: 25, to: 10000 }];
    expect(lowBandSpectrum(sets, HANN, 48000)).toEqual({ segment: 4096, decimation: 16 });
    expect(lowBandSpectrum(sets, HANN, 25600)).toEqual({ segment: 4096, decimation: 16 });
    expect(lowBandSpectrum(sets, HANN, 12800)).toEqual({ segment: 4096, decimation: 8 });
    // A 256-point segment leaves the bands up to 6.3 kHz unresolved at 48 kHz (upper edge 7079 Hz): fs/(6D) above it only for D = 1, a Welch at fs.
    expect(lowBandSpectrum(sets, { ...HANN, segment: 256 }, 48000)).toEqual({ segment: 65536, decimation: 1 });
    expect(lowBandSpectrum(sets, { ...HANN, segment: 65536 }, 48000)).toBeNull();
  });
});

describe('missing samples break the decimated stream', () => {
  it('a gap of 0.5 s and a step of 1000 across it: no segment holds the gap or the filters\' settling after it; the low bands read as the 65,536-point Welch of the same record', () => {
    const x = signal(20 * FS, 7);
    const from = 8 * FS + 123, to = from + FS / 2;
    for (let i = from; i < to; i++) x[i] = NaN;
    for (let i = to; i < x.length; i++) x[i] += 1000;
    // The boxcar window, which weighs a segment's first samples in full, where Hann's would hide the filters' settling.
    const notes: string[] = [], boxcar = { ...HANN, window: 'boxcar' as const };
    const psd = decimatedPsd(x, 8191, notes, boxcar);
    // Outputs at m·D: those before the gap, and those from the settling after it on, each a stretch of whole segments.
    const settling = new Decimator(FS, D).settling, hop = HANN.segment / 2;
    const before = Math.ceil(from / D), after = Math.ceil(x.length / D) - (Math.ceil(to / D) + settling + 1);
    const whole = (n: number) => (n >= HANN.segment ? Math.floor((n - HANN.segment) / hop) + 1 : 0);
    expect(psd.segments).toBe(whole(before) + whole(after));
    expect(notes).toEqual([expect.stringMatching(/^x: spectrum of every 16th sample \(low-passed, 3000 Hz\) from the \d+ segments of 4096 samples free of missing samples/)]);
    // The step would spread tens of dB over the low bands if a segment held it; the plain Welch at fs breaks its stream alike.
    const { ctx, push } = channel();
    const plain = spectrumOf(ctx, { ...boxcar, segment: D * HANN.segment });
    for (let at = 0; at < x.length; at += 8191) push(x.subarray(at, at + 8191));
    for (const band of bandsOf(3, 25, 315)) {
      expect(Math.abs(db(bandMeanSquare(psd, band.lower, band.upper) / bandMeanSquare(plain.psd()!, band.lower, band.upper))), `${band.nominal} Hz`).toBeLessThan(0.1);
    }
  });

  it('a recording that starts with missing samples: the first finite sample starts the filters; what comes before is left out', () => {
    const x = signal(10 * FS, 11);
    for (let i = 0; i < 1000; i++) x[i] = NaN;
    const psd = decimatedPsd(x);
    const clean = decimatedPsd(x.subarray(1000));
    for (const band of bandsOf(3, 25, 315)) expect(Math.abs(db(bandMeanSquare(psd, band.lower, band.upper) / bandMeanSquare(clean, band.lower, band.upper))), `${band.nominal} Hz`).toBeLessThan(0.1);
    expect(Number.isFinite(psd.density.reduce((a, b) => a + b, 0))).toBe(true);
  });
});
