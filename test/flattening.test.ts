// A waveform flattened near its limit (clipped, or compressed before the converter) against scipy.signal.resample_poly's
// 4× interpolated peak; clean signals stay clean. Recordings and references: test/fixtures/make-peak-spike-vectors.py.
import { describe, expect, it } from 'vitest';
import type { ChannelDeclaration } from '../spec/archive.js';
import { reduceRecording } from '../pipeline/reduce/compute.js';
import type { Flag } from '../stages/quality/flag.js';
import { FLATTENED_MARGIN, flattening } from '../stages/quality/flattening.js';
import { fixture, readJson } from './helpers.js';

const ref = readJson(fixture('peak-spike-vectors.json'));
type PeakCase = { channel: Partial<ChannelDeclaration>; sample_peak: number; interpolated_peak: number; flattened: boolean; top_repeats: number };
const cases = ref.peaks as Record<string, PeakCase>;

async function reduce(name: string, chunkFrames = 4096) {
  const c = cases[name];
  const decl: ChannelDeclaration = { name: 'acc', quantity: 'acceleration', unit: 'm/s^2', scale: 1, offset: 0, range: null, bits: null, max_frequency_hz: null, ...c.channel };
  const r = await reduceRecording({ recording: name, path: fixture('peaks', `${name}.wav`), group: 'g', format: null, sampleRate: null, layout: null, channels: [decl], labels: {}, durationS: null, spec: {}, chunkFrames });
  expect(r.reason).toBeUndefined();
  const flag = (n: string) => r.quality[0].flags.find((f) => f.name === n) as Flag;
  return { row: r.rows[0] as Record<string, any>, flag };
}

describe('a flattened waveform: its 4× interpolated peak beyond the limit (scipy.signal.resample_poly for the peak)', () => {
  for (const name of ['softclip_16', 'softclip_gentle_24', 'plateau_24']) {
    it(`${name}: peak_capture warns of flattening, names the limit, gives no true_peak and never advises it`, async () => {
      const c = cases[name];
      const { row, flag } = await reduce(name);
      const f = flag('peak_capture');
      const limit = Math.max(...c.channel.range!.map(Math.abs));
      expect(c.interpolated_peak).toBeGreaterThan(limit * (1 + FLATTENED_MARGIN)); // the reference itself lies past the margin
      expect(f.severity).toBe('warn');
      expect(f.message).toMatch(/flattened near its limit/);
      expect(f.message).toMatch(/check the channel for clipping or compression/);
      expect(f.message).not.toMatch(/use true_peak|true_peak holds/);
      expect(f.evidence.limit).toBe(limit);
      // The largest sample as numpy reads it; the interpolated peak within 2 % of scipy's (a different FIR, on content to Nyquist).
      expect(f.evidence.sample_peak).toBeCloseTo(c.sample_peak, 9);
      expect(Math.abs((f.evidence.interpolated_peak as number) / c.interpolated_peak - 1)).toBeLessThan(0.02);
      expect(row.true_peak).toBeNull();
      expect(row.peak_shortfall).toBeNull();
    });
  }

  it('a float WAV clipped at ±1.0 with no range or bits: the repeated largest sample and the overshoot say flattened, without a full scale', async () => {
    const c = cases.floatclip_norange;
    const { row, flag } = await reduce('floatclip_norange');
    const f = flag('peak_capture');
    expect(f.severity).toBe('warn');
    expect(f.evidence.limit).toBeNull();
    expect(f.evidence.largest_sample_repeats).toBe(c.top_repeats); // numpy's count of samples at the largest magnitude
    expect(f.evidence.sample_peak).toBeCloseTo(c.sample_peak, 9);
    expect(Math.abs((f.evidence.interpolated_peak as number) / c.interpolated_peak - 1)).toBeLessThan(0.02);
    expect(f.message).toMatch(/no range or bits are declared/);
    expect(f.message).not.toMatch(/full scale|use true_peak/);
    expect(row.true_peak).toBeNull();
  });
});

describe('clean signals stay clean', () => {
  it('loud broadband vibration, a half-sine shock and broadband float noise: true_peak within 0.5 % of scipy\'s, no flattening', async () => {
    for (const name of ['clean_broadband_24', 'halfsine_shock_24', 'clean_float_norange']) {
      const c = cases[name];
      const { row, flag } = await reduce(name);
      expect(Math.abs(row.true_peak / c.interpolated_peak - 1)).toBeLessThan(0.005);
      expect(flag('peak_capture').message).not.toMatch(/flattened/);
      expect(flag('saturation').severity).toBe('ok');
    }
  });

  it('a tone at 0.45 fs: no flattening (the interpolation reads low so near Nyquist, never above scipy\'s)', async () => {
    const c = cases.tone_near_nyquist_24;
    const { row, flag } = await reduce('tone_near_nyquist_24');
    expect(flag('peak_capture').message).not.toMatch(/flattened/);
    expect(row.true_peak).toBeGreaterThanOrEqual(c.sample_peak);
    expect(row.true_peak).toBeLessThanOrEqual(c.interpolated_peak * 1.001);
  });

  it('a tone locked to the sampling repeats its largest sample on every sample: not a flat top (derived: 1/cos(π/4) at fs/4)', () => {
    // Four samples a cycle with the crests midway: every sample at cos(π/4) of the amplitude, the true peak 1/cos(π/4) above.
    expect(flattening(Math.SQRT1_2, 1, null, { count: 4000, samples: 4000 })).toBeNull();
    expect(flattening(Math.SQRT1_2, 1, null, { count: 40, samples: 4000 })).not.toBeNull();
    expect(flattening(Math.SQRT1_2, 1, null, { count: 1, samples: 4000 })).toBeNull();
  });
});

// Recordings and references: test/fixtures/make-flat-top-vectors.py (numpy's counts, scipy.signal.resample_poly's 4× peaks).
const flatRef = readJson(fixture('flat-top-vectors.json'));
type FlatCase = PeakCase & { middle: number; top: number; near_below: number; interpolated_excursion: number; interpolated_min: number; interpolated_max: number };
const flatCases = flatRef.cases as Record<string, FlatCase>;

async function reduceFlat(name: string) {
  const c = flatCases[name];
  const decl: ChannelDeclaration = { name: 'ch', quantity: 'acceleration', unit: 'm/s^2', scale: 1, offset: 0, range: null, bits: null, max_frequency_hz: null, ...c.channel };
  const r = await reduceRecording({ recording: name, path: fixture('flat-top', `${name}.wav`), group: 'g', format: null, sampleRate: null, layout: null, channels: [decl], labels: {}, durationS: null, spec: {}, chunkFrames: 1000 });
  expect(r.reason).toBeUndefined();
  return { row: r.rows[0] as Record<string, any>, flag: r.quality[0].flags.find((f) => f.name === 'peak_capture') as Flag, flags: r.quality[0].flags };
}

describe('a range not centred on zero: each end held to its own (scipy.signal.resample_poly for the excursion)', () => {
  it('a 0–16 bar channel compressed toward 0.15 bar at its low end: flattened, though by magnitude the interpolated peak stays far below 16', async () => {
    const c = flatCases.pressure_low_end;
    // scipy's 4× interpolation reaches below 0 − 10 % of the half-span (−0.8 bar), while no magnitude nears 16 · 1.1.
    expect(c.interpolated_min).toBeLessThan(-0.8);
    expect(c.top * (1 + FLATTENED_MARGIN)).toBeLessThan(16);
    const { flag, row } = await reduceFlat('pressure_low_end');
    expect(flag.severity).toBe('warn');
    expect(flag.message).toMatch(/flattened near an end of its limits/);
    expect(flag.evidence.range_middle).toBe(8);
    expect(flag.evidence.limit).toBe(8);
    expect(Math.abs((flag.evidence.interpolated_excursion as number) / c.interpolated_excursion - 1)).toBeLessThan(0.02);
    expect(row.true_peak).toBeNull();
  });

  it('the same channel uncompressed reads clean, its true peak within 0.5 % of scipy\'s', async () => {
    const c = flatCases.pressure_clean;
    const { flag, row } = await reduceFlat('pressure_clean');
    expect(flag.message).not.toMatch(/flattened/);
    expect(Math.abs(row.true_peak / Math.max(Math.abs(c.interpolated_min), c.interpolated_max) - 1)).toBeLessThan(0.005);
  });
});

describe('a flat top on a channel without range or bits, holding a tenth of the samples or more', () => {
  it.each(['sine_clipped_norange', 'noise_clipped_norange'])('%s: flattened by its repeats and the values just below them (numpy\'s counts), with no overshoot past the margin', async (name) => {
    const c = flatCases[name];
    // The interpolated peak (scipy) stays within the 10 % margin of the largest sample, which alone misses it.
    expect(c.interpolated_excursion).toBeLessThan(c.top * (1 + FLATTENED_MARGIN));
    expect(c.top_repeats / 6400).toBeGreaterThanOrEqual(0.1);
    expect(c.near_below).toBeGreaterThan(0);
    const { flag, row } = await reduceFlat(name);
    expect(flag.severity).toBe('warn');
    expect(flag.evidence.largest_sample_repeats).toBe(c.top_repeats);
    expect(flag.message).toMatch(/flattened at its largest value: \d+ samples \([\d.]+ %\) sit at .* reached smoothly/);
    expect(row.true_peak).toBeNull();
  });

  it.each(['locked_tone_norange', 'coarse_sine_norange', 'square_norange'])('%s: its largest magnitude holds a tenth of the samples, but only exact values come near it: clean', async (name) => {
    const c = flatCases[name];
    expect(c.top_repeats / 6400).toBeGreaterThanOrEqual(0.1);
    expect(c.near_below).toBe(0);
    const { flag } = await reduceFlat(name);
    expect(flag.message).not.toMatch(/flattened/);
  });

  it('the rule itself: a top held by a tenth or more is a flat top only where values come smoothly up to it (ours)', () => {
    expect(flattening(1, 1, null, { count: 2000, samples: 6400, near: 3 })?.flatTop).toBe(true);
    expect(flattening(1, 1, null, { count: 2000, samples: 6400, near: 0 })).toBeNull();
    // Under a tenth, the overshoot rule as before.
    expect(flattening(1, 1.2, null, { count: 100, samples: 6400, near: 0 })).not.toBeNull();
    expect(flattening(1, 1.05, null, { count: 100, samples: 6400, near: 50 })).toBeNull();
    // A range centred on zero keeps the magnitude rule; [0, 16] holds each end: −1 below 0 is 9 from the middle, past 8.8.
    expect(flattening(15, 17, [-16, 16], null, undefined, undefined, undefined, 9)).toBeNull();
    expect(flattening(15, 15, [0, 16], null, undefined, undefined, undefined, 9)?.excursion).toBe(9);
    expect(flattening(15, 15, [0, 16], null, undefined, undefined, undefined, 8.7)).toBeNull();
  });
});
