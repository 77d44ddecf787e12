// Time-weighted maxima of recordings too short for the exponential average to settle, against the closed-form step response
// of IEC 61672-1's exponential time weighting (common practice): started from zero, a steady mean square reaches
// 1 − e^(−T/τ) of itself after T seconds, 10·lg(1 − e^(−T/τ)) dB; within 0.1 dB only after τ·ln(1/(1 − 10^(−0.01))) ≈ 3.78 τ.
import { describe, expect, it } from 'vitest';
import { settlingS, startShortfallDb } from '../stages/dsp/exponential-average.js';
import { channel, reduce, sine } from './reduce-signal.js';

const mic = channel({ name: 'mic', quantity: 'sound_pressure', unit: 'Pa', scale: 200 });
const notes = (messages: string[]) => messages.join('\n');

describe('the exponential average started from zero', () => {
  it('reads 10·lg(1 − e^(−T/τ)) dB of a steady value after T: −2.0 dB at T = τ, 0.1 dB at 3.78 τ (the step response, closed form)', () => {
    expect(startShortfallDb(1, 1)).toBeCloseTo(10 * Math.log10(1 - Math.exp(-1)), 12);
    expect(startShortfallDb(1, 1)).toBeCloseTo(-1.992, 3);
    expect(settlingS(1)).toBeCloseTo(Math.log(1 / (1 - 10 ** -0.01)), 12);
    expect(startShortfallDb(settlingS(0.125), 0.125)).toBeCloseTo(-0.1, 12);
  });

  it('max_twrms of a constant held 0.5 s is its value × √(1 − e^(−T/τ)), with a note giving that bound for the 1 s average only', async () => {
    const fs = 1000, level = 25;
    const { row, result } = await reduce(new Float64Array(fs / 2).fill(level), fs, { time_weighting_s: [0.125, 1] } as never);
    // N samples of the sampled average give 1 − (1 − α)^N = 1 − e^(−N/(τ·fs)) exactly.
    expect(row.max_twrms_1000ms / (level * Math.sqrt(1 - Math.exp(-0.5)))).toBeCloseTo(1, 12);
    expect(row.max_twrms_125ms / (level * Math.sqrt(1 - Math.exp(-0.5 / 0.125)))).toBeCloseTo(1, 12);
    const text = notes(result.messages);
    // 10·lg(1 − e^(−0.5)) = −4.05 dB, and 1 − √(1 − e^(−0.5)) = 37.3 % of the RMS; 0.5 s is past 3.78 × 0.125 s, so F has settled.
    expect(text).toMatch(/x: 0\.5 s of samples is too short for the time weighting to settle .*: a signal steady over the recording reads max_twrms_1000ms 4\.05 dB \(37\.3 %\) low, 10·lg\(1 − e\^\(−T\/τ\)\)/);
    expect(text).not.toMatch(/max_twrms_125ms [\d.]+ dB/);
  });

  it('notes the 1 s average up to 3.78 s of samples and not beyond', async () => {
    const fs = 100;
    const at = async (seconds: number) => notes((await reduce(new Float64Array(Math.round(seconds * fs)).fill(1), fs, { time_weighting_s: [1] } as never)).result.messages);
    expect(await at(3.7)).toMatch(/max_twrms_1000ms 0\.109 dB/);
    expect(await at(3.9)).not.toMatch(/too short for the time weighting/);
  });
});

describe('LAFmax and LASmax of short steady tones', () => {
  const L = 94, amplitude = 20e-6 * 10 ** (L / 20) * Math.SQRT2, fs = 48000;

  it('a 1 s 1 kHz tone of 94 dB: LASmax 94 + 10·lg(1 − e^(−1)) = 92.0 dB, said in a note; LAFmax 94 dB, not noted', async () => {
    const { row, result } = await reduce(sine(fs, fs, 1000, amplitude), fs, { sound_level: {} } as never, mic);
    // A weighting is 0 dB at 1 kHz (IEC 61672-1); the averages run over every sample, the filters starting on the predicted past.
    expect(Math.abs(row.lasmax - (L + startShortfallDb(1, 1)))).toBeLessThan(0.02);
    expect(Math.abs(row.lafmax - L)).toBeLessThan(0.02);
    const text = notes(result.messages);
    expect(text).toMatch(/mic: 1 s of sound is too short for the time weighting to settle \(it starts from zero\): a sound steady over the recording reads LASmax 1\.99 dB low \(Slow, τ = 1 s, settles within 0\.1 dB after 3\.78 s\), 10·lg\(1 − e\^\(−T\/τ\)\)/);
    expect(text).not.toMatch(/LAFmax [\d.]+ dB low/);
  });

  it('a 0.3 s tone: both noted, each by its own bound; a 4 s tone: neither, and LASmax within 0.1 dB', async () => {
    const short = await reduce(sine(0.3 * fs, fs, 1000, amplitude), fs, { sound_level: {} } as never, mic);
    expect(Math.abs(short.row.lafmax - (L + startShortfallDb(0.3, 0.125)))).toBeLessThan(0.02);
    expect(Math.abs(short.row.lasmax - (L + startShortfallDb(0.3, 1)))).toBeLessThan(0.02);
    // 10·lg(1 − e^(−2.4)) = −0.413 dB and 10·lg(1 − e^(−0.3)) = −5.86 dB.
    expect(notes(short.result.messages)).toMatch(/reads LAFmax 0\.413 dB low \(Fast, τ = 0\.125 s, settles within 0\.1 dB after 0\.473 s\), LASmax 5\.86 dB low/);
    const long = await reduce(sine(4 * fs, fs, 1000, amplitude), fs, { sound_level: {} } as never, mic);
    expect(Math.abs(long.row.lasmax - L)).toBeLessThan(0.1);
    expect(notes(long.result.messages)).not.toMatch(/too short for the time weighting/);
  });
});
