// Burg's method and the backward extension by linear prediction, against identities of sampled sinusoids
// (sin(θ + ω) + sin(θ − ω) = 2·cos ω·sin θ, so a sampled sine obeys x[n] = 2·cos ω·x[n−1] − x[n−2]: common practice).
import { describe, expect, it } from 'vitest';
import { backwardExtension } from '../stages/dsp/backward-extension.js';
import { burgPredictor } from '../stages/dsp/burg.js';

const tone = (from: number, n: number, fs: number, f: number, a: number, phase: number) =>
  Float64Array.from({ length: n }, (_, i) => a * Math.sin((2 * Math.PI * f * (from + i)) / fs + phase));

describe("Burg's method", () => {
  it('finds the second-order predictor of a sampled sine, [1, −2·cos ω, 1], and stops there', () => {
    const fs = 48000, f = 125;
    const a = burgPredictor(tone(0, 4800, fs, f, 1, 0.7));
    expect(a.length).toBe(3);
    expect(a[1]).toBeCloseTo(-2 * Math.cos((2 * Math.PI * f) / fs), 4);
    expect(a[2]).toBeCloseTo(1, 4);
  });

  it('keeps every model it makes stable: the predictor of white noise is near [1] and its reflection coefficients below 1', () => {
    // A linear congruential sequence (Numerical Recipes' ranqd1 constants) stands for white noise.
    let s = 12345;
    const x = Float64Array.from({ length: 4096 }, () => ((s = (1664525 * s + 1013904223) >>> 0) / 2 ** 32) - 0.5);
    const a = burgPredictor(x, 8);
    for (let j = 1; j < a.length; j++) expect(Math.abs(a[j])).toBeLessThan(0.1);
  });
});

describe('backward extension', () => {
  it.each([[20, 48000], [125, 44100], [1000, 192000], [16000, 48000]])('continues a %s Hz tone at %s Hz back in time, with its offset', (f, fs) => {
    const n = Math.ceil(0.1 * fs), offset = 0.3;
    const past = backwardExtension(tone(0, n, fs, f, 1, 2.5).map((v) => v + offset), n);
    const truth = tone(-n, n, fs, f, 1, 2.5);
    // The last samples before the recording matter most to a filter started on them: they follow the tone closely. Further
    // back the phase drifts by Burg's small frequency bias on pure tones (Kay & Marple 1981, from memory), 3e-4 of a1 at fs/3.
    let worst = 0;
    for (let i = n - Math.round(0.0005 * fs); i < n; i++) worst = Math.max(worst, Math.abs(past[i] - offset - truth[i]));
    expect(worst).toBeLessThan(5e-3);
  });

  it('gives the mean held constant for a stretch too short for a model, and for a constant one', () => {
    // Hann weights (1 − cos) at 3 points: 0.5, 2, 0.5, so the mean is (1 + 8 + 1.5) / 3.
    expect([...backwardExtension(new Float64Array([2, 4, 3]), 4)]).toEqual([3.5, 3.5, 3.5, 3.5]);
    expect([...backwardExtension(new Float64Array(100).fill(-1), 3)]).toEqual([-1, -1, -1]);
  });
});
