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
