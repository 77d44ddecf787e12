// What the converter's step does to a channel's figures, against numpy: known signals rounded to 16-bit codes, the codes'
// figures against the signal's (test/fixtures/make-quantisation-vectors.py), and the verdicts quern gives the same codes.
import { describe, expect, it } from 'vitest';
import type { ChannelDeclaration } from '../spec/archive.js';
import { reduceRecording } from '../pipeline/reduce/compute.js';
import type { Flag } from '../stages/quality/flag.js';
import { meanError, peakError, quantisationDensity, rmsError } from '../stages/quality/quantisation.js';
import { fixture, readJson } from './helpers.js';

interface Case { fs: number; scale: number; quantity: string; unit: string; max_frequency_hz: number | null; step: number; rms_error: number; peak_error: number; mean_error: number | null; std_steps: number; top_band_over_floor: number; above_declared_over_floor: number | null }
const ref = readJson(fixture('quantisation-vectors.json')) as { cases: Record<string, Case> };

async function flagsOf(name: string) {
  const c = ref.cases[name];
  const decl: ChannelDeclaration = { name: 'x', quantity: c.quantity, unit: c.unit, scale: c.scale, offset: 0, range: null, bits: 16, max_frequency_hz: c.max_frequency_hz };
  const r = await reduceRecording({ recording: name, path: fixture(`quantisation/${name}.wav`), group: 'g', format: null, sampleRate: null, layout: null, channels: [decl], labels: {}, durationS: null, spec: {}, chunkFrames: 4096 });
  expect(r.reason).toBeUndefined();
  const flag = (n: string) => r.quality[0].flags.find((f) => f.name === n) as Flag;
  return { c, flag, row: r.rows[0] as Record<string, any> };
}

describe('the errors the step puts on the figures', () => {
  // Common practice: rounding adds q²/12 to the power (IEEE Std 1241), so RMS reads √(1 + q²/(12σ²)) − 1 high.
  it('the RMS excess follows the step\'s noise added to the signal\'s power: √(1 + 1/(12·4²)) − 1 = 0.26 % at 4 steps RMS', () => {
    const q = 1, s = 4;
    expect(rmsError(q, Math.sqrt(s * s + 1 / 12))).toBeCloseTo(Math.sqrt(1 + 1 / (12 * s * s)) - 1, 12);
    expect(rmsError(q, Math.sqrt(1 / 12))).toBe(Infinity);
    expect(peakError(0.5, 10)).toBeCloseTo(0.025, 12);
    expect(meanError(0.1, -5)).toBeCloseTo(0.01, 12);
    expect(quantisationDensity(2, 100)).toBeCloseTo(4 / 600, 12); // q²/12 over fs/2
  });

  it.each([['noise_4_steps', 'note'], ['noise_1.5_steps', 'warn']])('%s of live vibration: the stated errors match numpy\'s, and it reads %s', async (name, severity) => {
    const { c, flag } = await flagsOf(name);
    const f = flag('resolution');
    expect(f.severity).toBe(severity);
    // Half a step bounds what rounding does to the peak; numpy's measured change lies within it.
    expect(f.evidence.peak_error as number).toBeGreaterThanOrEqual(c.peak_error);
    expect(f.evidence.peak_error as number).toBeLessThan(0.08);
    // The RMS excess, from the measured RMS and the step, within 0.3 points of numpy's over this 2 s record.
    expect(Math.abs((f.evidence.rms_error as number) - c.rms_error)).toBeLessThan(0.003);
    expect(f.message).toMatch(/a peak can be off by up to [\d.]+ % \(half a step of the [\d.]+ m\/s\^2 peak\)/);
    expect(flag('aliasing').severity).toBe('ok');
  });

  it.each(['noise_0.4_steps', '8_bit_under_a_step'])('%s: numpy finds RMS and peak 15 % off or more, and the channel fails', async (name) => {
    const { c, flag } = await flagsOf(name);
    expect(Math.max(c.rms_error, c.peak_error)).toBeGreaterThan(0.15);
    expect(flag('resolution').severity).toBe('fail');
    expect(flag('resolution').message).toMatch(/describe the converter's steps/);
    if (name === '8_bit_under_a_step') expect(flag('resolution').evidence.data_grid_steps).toBe(256);
  });
});

describe('a static reading', () => {
  it('a creep hold of 812.3 µm/m with 0.4 steps of noise: its mean is resolved (numpy), so resolution notes and names the noise', async () => {
    const { c, flag, row } = await flagsOf('static_strain');
    const f = flag('resolution');
    expect(f.severity).toBe('note');
    expect(c.mean_error).toBeLessThan(1e-5);
    expect(f.evidence.mean_error as number).toBeGreaterThanOrEqual(c.mean_error!); // half a step bounds it
    expect(f.message).toMatch(/a static reading: its mean, 812\.3\d* µm\/m, lies 1330\d steps from zero/);
    expect(f.message).toMatch(/describe that noise rather than the strain/);
    expect(row.quantisation_snr_db).toBeCloseTo(20 * Math.log10(c.std_steps * Math.sqrt(12)), 6);
  });

  it('the same reading declared as an acceleration, whose variation is the figure, still fails', async () => {
    const { c, flag } = await flagsOf('static_acceleration');
    expect(c.rms_error).toBeGreaterThan(0.15);
    expect(flag('resolution').severity).toBe('fail');
  });

  it('its noise at the converter\'s floor is not called aliasing: the top band\'s density over step²/(6·fs) as scipy\'s Welch gives it', async () => {
    const { c, flag } = await flagsOf('static_strain');
    const f = flag('aliasing');
    expect(f.severity).toBe('note');
    expect(f.evidence.top_band_over_converter_floor as number).toBeCloseTo(c.top_band_over_floor, 1);
    expect(f.evidence.above_declared_over_converter_floor as number).toBeCloseTo(c.above_declared_over_floor!, 1);
    expect(f.message).toMatch(/the converter's noise, white to Nyquist, not content folded/);
  });
});
