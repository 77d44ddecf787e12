// The envelope's dominant line is given only where it stands out of the envelope's own noise: its prominence over the median
// of the bins around it against scipy's envelope spectrum (|hilbert(sosfiltfilt(x))|, scipy.signal.welch; vectors made by
// test/fixtures/make-envelope-line-vectors.py), and the chance level of noise's largest bin against scipy.stats.
import { describe, expect, it } from 'vitest';
import { chanceLineDb, chiSquareAt, normalUpper, segmentCorrelation } from '../stages/dsp/chance-line.js';
import { makeWindow } from '../stages/dsp/window.js';
import { MIN_PROMINENCE_DB } from '../stages/envelope.js';
import { fixture, readJson } from './helpers.js';
import { channel, reduce } from './reduce-signal.js';
import { counterWhite } from './counter-noise.js';

const ref = readJson(fixture('envelope-line-vectors.json'));
const { fs, seconds } = ref as { fs: number; seconds: number };
const filter = { kind: 'bandpass', order: 4, low_hz: 2500, high_hz: 4500, zero_phase: true } as const;
const acc = channel({ scale: 20 });

/** Uniform counter-hash noise of unit variance, sample for sample as counter_noise.py makes it. */
const counterNoise = (n: number, seed: number): Float64Array => counterWhite(n, seed).map((v) => v * Math.sqrt(12));

const modulated = (n: number, seed: number, m: number, fm: number) => counterNoise(n, seed).map((v, i) => Math.fround(v * (1 + m * Math.cos(2 * Math.PI * fm * i / fs))));
const envelopeOf = async (x: Float64Array) => (await reduce(x, fs, { envelope: { filter } } as never, acc)).row;

describe('the envelope\'s dominant line and its prominence, against scipy\'s envelope spectrum', () => {
  it.each(['modulated_30_percent_87_3_hz', 'modulated_50_percent_161_hz'])('%s (noise modulated as by a bearing defect): the modulation frequency, within a bin, and scipy\'s prominence', async (name) => {
    const c = ref.cases[name];
    const row = await envelopeOf(modulated(fs * seconds, c.seed, c.m, c.fm));
    expect(Math.abs(row.env_dominant_prominence_db - c.prominence_db)).toBeLessThan(0.05);
    expect(row.env_dominant_frequency).toBe(c.frequency);
    expect(Math.abs(row.env_dominant_frequency - c.fm)).toBeLessThanOrEqual(c.df);
  });

  // An invented gearbox rig at a steady 1500 rpm: tones at 25, 50 and 150 Hz, stored as float32, nothing in the 2.5–4.5 kHz
  // band. The filtered band holds only the rounding of the stored samples (some 1e-8 of the channel's RMS), below the measurable
  // floor, 10⁻⁶ of it (README, The measurable floor): its envelope's largest line is rounding's, so none is given.
  it('a band that holds nothing but rounding (below 10⁻⁶ of the channel\'s RMS) gives no dominant frequency and no prominence', async () => {
    const rate = 12800, n = 8 * rate;
    const x = Float64Array.from({ length: n }, (_, i) => { const t = i / rate; return Math.fround(Math.sin(2 * Math.PI * 25 * t) + 0.5 * Math.sin(2 * Math.PI * 50 * t + 0.3) + 2 * Math.sin(2 * Math.PI * 150 * t + 1)); });
    const { row } = await reduce(x, rate, { envelope: { filter } } as never, channel({ scale: 10 }));
    const channelRms = Math.sqrt(x.reduce((a, v) => a + v * v, 0) / n);
    expect(channelRms).toBeCloseTo(Math.sqrt((1 + 0.25 + 4) / 2), 3); // three tones' powers add (common practice)
    expect(row.filtered_rms).toBeLessThan(1e-6 * channelRms);
    expect(row.env_dominant_frequency).toBeNull();
    expect(row.env_dominant_prominence_db).toBeNull();
    // The same tones with a band component at 10⁻⁵ of their RMS, modulated at 87 Hz: above the floor, its line is given.
    const y = x.map((v, i) => v + 1e-5 * channelRms * Math.SQRT2 * (1 + 0.5 * Math.sin(2 * Math.PI * 87 * i / rate)) * Math.sin(2 * Math.PI * 3500 * i / rate));
    const live = (await reduce(y, rate, { envelope: { filter } } as never, channel({ scale: 10 }))).row;
    expect(live.filtered_rms).toBeGreaterThan(1e-6 * channelRms);
    expect(Math.abs(live.env_dominant_frequency - 87)).toBeLessThanOrEqual(rate / 4096);
  });

  it('plain noise: scipy\'s largest envelope bin stands 1.4 dB above the bins around it; no frequency is given, the prominence is', async () => {
    const c = ref.cases.noise;
    const row = await envelopeOf(modulated(fs * seconds, c.seed, 0, 0));
    expect(Math.abs(row.env_dominant_prominence_db - c.prominence_db)).toBeLessThan(0.05);
    expect(c.prominence_db).toBeLessThan(MIN_PROMINENCE_DB);
    expect(row.env_dominant_frequency).toBeNull();
    expect(row.env_mean).toEqual(expect.any(Number));
  });

  // The shortest envelopes averaging one to three segments, where noise's largest bin reaches 12 dB over the median around it
  // (measured), and 1 s; a fixed seed set of 200 trials each: at most 1 % may give a frequency.
  it.each([0.33, 0.5, 1])('noise over %f s, 200 seeded trials: at most 2 give a frequency', async (s) => {
    let given = 0, prominent = 0;
    for (let trial = 0; trial < 200; trial++) {
      const row = await envelopeOf(counterNoise(Math.round(s * fs), 1000 + 7919 * trial));
      if (row.env_dominant_frequency != null) given++;
      if (row.env_dominant_prominence_db >= MIN_PROMINENCE_DB) prominent++;
    }
    expect(given).toBeLessThanOrEqual(2);
    // Short envelopes' noise passes the fixed threshold often: the chance level is what keeps it out.
    if (s === 0.33) expect(prominent).toBeGreaterThan(100);
  }, 120_000);

  it('a threshold from the spec: 20 dB leaves the 30 % modulation\'s 13 dB line without a frequency, its prominence still given', async () => {
    const c = ref.cases.modulated_30_percent_87_3_hz;
    const { row } = await reduce(modulated(fs * seconds, c.seed, c.m, c.fm), fs, { envelope: { filter, min_prominence_db: 20 } } as never, acc);
    expect(row.env_dominant_frequency).toBeNull();
    expect(Math.abs(row.env_dominant_prominence_db - c.prominence_db)).toBeLessThan(0.05);
  });
});

describe('the chance level of noise\'s largest bin', () => {
  it('its parts against scipy.stats: the normal quantile (norm.isf) and the χ² quantile over the median (chi2.isf, chi2.median)', () => {
    const { p, z, ratio_db } = ref.chance as { p: number; z: number; ratio_db: Record<string, number> };
    expect(Math.abs(normalUpper(p) - z)).toBeLessThan(4.5e-4); // Abramowitz and Stegun's bound
    for (const [nu, db] of Object.entries(ratio_db)) {
      const approx = 10 * Math.log10(chiSquareAt(Number(nu), z) / chiSquareAt(Number(nu), 0));
      // Wilson and Hilferty's cube root errs high at two degrees of freedom (0.4 dB), less beyond: the level errs safe.
      expect(approx - db, `ν = ${nu}`).toBeGreaterThanOrEqual(-0.05);
      expect(approx - db, `ν = ${nu}`).toBeLessThan(0.45);
    }
  });

  it('Hann segments overlapping by half correlate by 0.167² (Welch 1967; Harris 1978, from memory)', () => {
    expect(Math.sqrt(segmentCorrelation(makeWindow('hann', 4096), 2048))).toBeCloseTo(0.167, 3);
    // One segment: two degrees of freedom, 13.2 dB by scipy; many: the level falls toward 0 dB.
    expect(chanceLineDb(1, 2048, { segment: 4096, overlap: 0.5, window: 'hann' })).toBeCloseTo(13.6, 1);
    expect(chanceLineDb(1000, 2048, { segment: 4096, overlap: 0.5, window: 'hann' })).toBeLessThan(1);
  });
});
