// The reduction stages through the real per-recording path (a float WAV on disk → reduceRecording), against textbook values and standards.
import { describe, expect, it } from 'vitest';
import { bandsOf, exactBand, nominalFrequency } from '../stages/octave.js';
import { channel, reduce, sine } from './reduce-signal.js';

describe('fractional-octave bands (IEC 61260-1:2014, base-10 system)', () => {
  it('one-third-octave mid-band frequencies from 25 Hz to 10 kHz: exact 1000·10^(x/10), nominal labels of ISO 266 (label list from memory)', () => {
    const nominal = [25, 31.5, 40, 50, 63, 80, 100, 125, 160, 200, 250, 315, 400, 500, 630, 800, 1000, 1250, 1600, 2000, 2500, 3150, 4000, 5000, 6300, 8000, 10000];
    const bands = bandsOf(3, 25, 10000);
    expect(bands.map((b) => b.nominal)).toEqual(nominal);
    bands.forEach((b, i) => {
      const x = i - 16;
      expect(b.mid).toBeCloseTo(1000 * 10 ** (x / 10), 9);
      expect(b.lower).toBeCloseTo(b.mid * 10 ** (-0.05), 9); // G^(−1/6) with G = 10^0.3
      expect(b.upper).toBeCloseTo(b.mid * 10 ** (0.05), 9);
    });
    // Published values of the 1 kHz band: edges 891.25 Hz and 1122.02 Hz (common practice tables).
    expect(exactBand(0, 3).lower).toBeCloseTo(891.25, 2);
    expect(exactBand(0, 3).upper).toBeCloseTo(1122.02, 2);
    // Adjacent bands share their edges.
    for (let i = 1; i < bands.length; i++) expect(bands[i].lower).toBeCloseTo(bands[i - 1].upper, 9);
  });

  it('octave labels 31.5 Hz to 16 kHz, mid-bands 1000·G^x', () => {
    expect(bandsOf(1, 31.5, 16000).map((b) => b.nominal)).toEqual([31.5, 63, 125, 250, 500, 1000, 2000, 4000, 8000, 16000]);
    expect(nominalFrequency(-3, 1)).toBe(125);
    expect(exactBand(-3, 1).mid).toBeCloseTo(1000 * 10 ** -0.9, 9);
  });

  it('a tone in the middle of a one-third-octave band puts A/√2 in that band and nearly nothing in the neighbours', async () => {
    const fs = 25600;
    const { row } = await reduce(sine(fs * 8, fs, 1000, 5), fs, { spectrum: { segment: 8192 }, octave_bands: { fraction: 3, from: 800, to: 1250 } });
    expect(row.oct3_1000_rms / (5 / Math.SQRT2)).toBeCloseTo(1, 3);
    expect(row.oct3_800_rms).toBeLessThan(1e-3);
    expect(row.oct3_1250_rms).toBeLessThan(1e-3);
  });
});

describe('bands, descriptors and velocity from the Welch spectrum', () => {
  it('band RMS of a tone of amplitude A inside the band is A/√2; an empty band holds nothing (Parseval)', async () => {
    const fs = 12800;
    const { row } = await reduce(sine(fs * 10, fs, 440, 7, 0.3), fs, { spectrum: {}, bands: [[200, 1000], [2000, 3000]] });
    expect(row.band_200_1000_rms / (7 / Math.SQRT2)).toBeCloseTo(1, 4);
    expect(row.band_200_1000_ms).toBeCloseTo(row.band_200_1000_rms ** 2, 9);
    expect(row.band_2000_3000_rms).toBeLessThan(1e-4);
    expect(Math.abs(row.dominant_frequency - 440)).toBeLessThanOrEqual(fs / 4096 / 2);
    expect(Math.abs(row.spectral_centroid - 440)).toBeLessThan(2);
  });

  it('a constant channel has no power above DC: no dominant frequency, as no centroid (Σ P = 0)', async () => {
    const fs = 12800;
    const { row } = await reduce(new Float64Array(fs * 2).fill(3.5), fs, { spectrum: {} });
    expect(row.spectral_centroid).toBeNull();
    expect(row.dominant_frequency).toBeNull();
  });

  it('bands of several fractions above Nyquist: the note names the lowest of them (ANSI S1.11 / IEC 61260 nominal 6300 Hz third, upper edge 7079 Hz > 6400 Hz)', async () => {
    const fs = 12800;
    const { result } = await reduce(sine(fs * 2, fs, 440, 1), fs, { octave_bands: [{ fraction: 1, from: 1000, to: 8000 }, { fraction: 3, from: 5000, to: 8000 }] });
    expect(result.messages.join()).toMatch(/fractional-octave bands \(6300 Hz and up\)/);
  });

  it('a band above the Nyquist frequency is null, and the run says so', async () => {
    const fs = 1000;
    const { row, result } = await reduce(sine(fs * 10, fs, 100, 1), fs, { bands: [[20, 200], [200, 1000]] });
    expect(row.band_200_1000_rms).toBeNull();
    expect(row.band_20_200_rms).not.toBeNull();
    expect(result.messages.join()).toMatch(/band 200–1000 Hz reaches above the Nyquist frequency 500 Hz/);
  });

  // A 10 Hz tone in 0.4 s at 25.6 kHz (one periodogram, 2.5 Hz resolution) lies within two bins of a 10–1000 Hz band's lower edge:
  // quality.json warns; the same tone over 8 s (a finer spectrum of every 16th sample, 0.39 Hz) in a 5–1000 Hz band reads
  // A/(2πf)/√2, and a 100 Hz tone needs no warning either way.
  it('a tone near a velocity band\'s lower edge, within its spectrum\'s resolution, is flagged; with finer bins it reads right', async () => {
    const fs = 25600, A = 10, v = (f: number) => (A / (2 * Math.PI * f) / Math.SQRT2) * 1000;
    const lowEdge = (r: Awaited<ReturnType<typeof reduce>>) => r.result.quality[0].flags.find((f) => f.name === 'velocity_low_edge');
    const coarse = await reduce(sine(fs * 0.4, fs, 10, A), fs, { velocity_bands: [[10, 1000]] });
    expect(lowEdge(coarse)?.message).toMatch(/may read \d+(\.\d)? % low: a line at 10\.0 Hz .* \(±5\.0 Hz at 2\.5 Hz resolution\) of the 10 Hz edge/);
    const fine = await reduce(sine(fs * 8, fs, 10, A), fs, { velocity_bands: [[5, 1000]] });
    expect(fine.row.velocity_5_1000_rms / v(10)).toBeCloseTo(1, 2);
    expect(lowEdge(fine)).toBeUndefined();
    const mid = await reduce(sine(fs * 8, fs, 100, A), fs, { velocity_bands: [[10, 1000]] });
    expect(lowEdge(mid)).toBeUndefined();
  });

  it('velocity of an acceleration tone A at f is A/(2πf)/√2 (integration in the frequency domain), in mm/s; g converts at 9.80665 m/s²', async () => {
    const fs = 12800, A = 10, f = 159.15494309189535; // 2πf = 1000 rad/s
    const { row } = await reduce(sine(fs * 10, fs, f, A), fs, { velocity_bands: [[10, 1000]] });
    expect(row.velocity_10_1000_rms / ((A / 1000 / Math.SQRT2) * 1000)).toBeCloseTo(1, 3);
    const g = await reduce(sine(fs * 10, fs, f, 1), fs, { velocity_bands: [[10, 1000]] }, channel({ unit: 'g' }));
    expect(g.row.velocity_10_1000_rms / ((9.80665 / 1000 / Math.SQRT2) * 1000)).toBeCloseTo(1, 3);
    const mic = await reduce(sine(fs, fs, f, 1), fs, { velocity_bands: [[10, 1000]] }, channel({ quantity: 'sound_pressure', unit: 'Pa' }));
    expect(mic.row.velocity_10_1000_rms).toBeNull();
  });
});

describe('time averages', () => {
  it('exponential time weighting of a constant c over T seconds reaches c·√(1 − e^(−T/τ)) (IEC 61672-1 exponential averaging)', async () => {
    const fs = 1000, T = 0.5;
    const { row } = await reduce(new Float64Array(fs * T).fill(3), fs, { time_weighting_s: [0.125, 1.0] });
    // The WAV holds float32 samples: 3 is stored to a relative 1e-8.
    expect(row.max_twrms_125ms).toBeCloseTo(3 * Math.sqrt(1 - Math.exp(-T / 0.125)), 6);
    expect(row.max_twrms_1000ms).toBeCloseTo(3 * Math.sqrt(1 - Math.exp(-T / 1)), 6);
  });

  it('names a time constant of a fraction of a millisecond as the spec gives it, not rounded: 62.5 ms is max_twrms_62p5ms', async () => {
    const fs = 1000, T = 0.5;
    const { row } = await reduce(new Float64Array(fs * T).fill(3), fs, { time_weighting_s: [0.0625, 0.1251] });
    expect(row.max_twrms_62p5ms).toBeCloseTo(3 * Math.sqrt(1 - Math.exp(-T / 0.0625)), 6);
    expect(row.max_twrms_125p1ms).toBeCloseTo(3 * Math.sqrt(1 - Math.exp(-T / 0.1251)), 6);
  });

  it('Slow-weighted RMS of a steady sine settles on A/√2', async () => {
    const fs = 8000;
    const { row } = await reduce(sine(fs * 20, fs, 250, 4), fs, { time_weighting_s: [1.0] });
    expect(row.max_twrms_1000ms / (4 / Math.SQRT2)).toBeCloseTo(1, 3);
  });

  it('MTVV: a 0.5 s burst of amplitude A in silence gives A/√2·√0.5 over 1 s (ISO 2631-1 running RMS, linear integration)', async () => {
    const fs = 1000;
    const x = new Float64Array(fs * 5);
    x.set(sine(fs / 2, fs, 20, 6), 2000);
    const { row } = await reduce(x, fs, { mtvv: { integration_s: 1 } });
    expect(row.mtvv).toBeCloseTo((6 / Math.SQRT2) * Math.sqrt(0.5), 6);
  });

  it('windows give mean, RMS and peak per window of the declared length', async () => {
    const fs = 1000;
    const x = Float64Array.from({ length: 3500 }, (_, i) => (i < 1000 ? 1 : i < 2000 ? -2 : 0.5));
    const { result } = await reduce(x, fs, { windows: { length_s: 1 } });
    const rows = result.tables.windows;
    const expected = [[0, 1, 1, 1, 1], [1, 1, -2, 2, 2], [2, 1, 0.5, 0.5, 0.5]];
    expect(rows.length).toBe(3); // the last half second makes no whole window
    rows.forEach((r, i) => [r.window_start_s, r.window_s, r.mean, r.rms, r.peak].forEach((v, j) => expect(v as number).toBeCloseTo(expected[i][j], 6)));
    expect(rows[0]).toMatchObject({ recording: 'x.wav', channel: 'x', unit: 'm/s^2' });
  });
});

describe('filtered envelopes', () => {
  it('of an amplitude-modulated carrier: envelope 1 + m·cos ωm t (mean 1, peak 1 + m), spectrum peak at the modulation frequency', async () => {
    const fs = 12800, n = fs * 20, fc = 3500, fm = 23, m = 0.5;
    const x = Float64Array.from({ length: n }, (_, i) => (1 + m * Math.cos(2 * Math.PI * fm * i / fs)) * Math.cos(2 * Math.PI * fc * i / fs));
    for (const zero_phase of [true, false]) {
      const { row } = await reduce(x, fs, { spectrum: { segment: 16384 }, envelope: { filter: { kind: 'bandpass', order: 4, low_hz: 2500, high_hz: 4500, zero_phase } } });
      expect(row.env_mean).toBeCloseTo(1, 2);
      expect(row.env_peak).toBeCloseTo(1 + m, 2);
      expect(row.env_rms).toBeCloseTo(Math.sqrt(1 + m * m / 2), 2);
      expect(Math.abs(row.env_dominant_frequency - fm)).toBeLessThanOrEqual(fs / 16384);
      // The carrier and its sidebands lie in the pass band: filtered RMS ≈ RMS of x.
      expect(row.filtered_rms / Math.sqrt((1 + m * m / 2) / 2)).toBeCloseTo(1, 2);
    }
  });

  // scipy.signal.hilbert(sosfiltfilt(x)) is the reference this envelope matches for band-pass and high-pass filters; after a
  // low-pass or band-stop filter the block-wise analytic signal strays by tens of per cent, so it is not given.
  it('after a low-pass or band-stop filter: filtered_rms only, the envelope figures empty, and the run says why', async () => {
    const fs = 12800, x = sine(fs * 4, fs, 300, 1);
    for (const filter of [{ kind: 'lowpass', order: 4, cutoff_hz: 4000 }, { kind: 'bandstop', order: 2, low_hz: 40, high_hz: 80 }] as const) {
      const { row, result } = await reduce(x, fs, { envelope: { filter: { ...filter, zero_phase: true } } } as never);
      expect(row.filtered_rms / Math.SQRT1_2).toBeCloseTo(1, 2);
      for (const c of ['env_mean', 'env_rms', 'env_peak', 'env_dominant_frequency']) expect(row[c], c).toBeNull();
      expect(result.messages.join()).toMatch(new RegExp(`a ${filter.kind} filter keeps content down to DC, so the envelope figures are left empty`));
    }
  });

  it('a filter band above the Nyquist frequency leaves the envelope empty and says why', async () => {
    const fs = 2000;
    const { row, result } = await reduce(sine(fs * 2, fs, 100, 1), fs, { envelope: { filter: { kind: 'bandpass', order: 4, low_hz: 2500, high_hz: 4500 } } });
    expect(row.env_rms).toBeNull();
    expect(result.messages.join()).toMatch(/envelope filter not applied: cut-off 2500 Hz must lie between 0 and the Nyquist frequency 1000 Hz/);
  });
});
