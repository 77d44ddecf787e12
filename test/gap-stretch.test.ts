// Recordings whose missing samples leave no gap-free Welch segment, against scipy.signal.welch on the longest gap-free
// stretch (vectors made by test/fixtures/make-stretch-vectors.py), and the dropout flag when the spectrum rests on little of them.
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { computeRecording, reduceRecording } from '../pipeline/reduce/compute.js';
import { assembleRecording } from '../pipeline/reduce/assemble.js';
import { encodeWav } from '../scripts/wav-file.js';
import { bandMeanSquare, Welch, type Psd } from '../stages/dsp/welch.js';
import type { Flag } from '../stages/quality/flag.js';
import { countMissing, inChunks, maxRelative, relative } from './dsp-signals.js';
import { fixture, readJson, tempDir } from './helpers.js';
import { channel, reduce } from './reduce-signal.js';

interface Case { name: string; n: number; fs: number; gaps: number[]; segment: number; density: number[]; segments: number; length: number; from: number | null; covered: number; dominant_frequency: number; spectral_centroid: number }
const cases: Case[] = readJson(fixture('stretch-vectors.json')).cases;
const byName = (name: string) => cases.find((c) => c.name === name)!;
const SCALE = channel().scale;
const f32 = (v: number) => Math.fround(v / SCALE) * SCALE;

/** As stretch_signal in make-stretch-vectors.py: tones at 10, 137.5 and 400 Hz, NaN at each index of `gaps`. */
function stretchSignal(c: Case): Float64Array {
  const x = Float64Array.from({ length: c.n }, (_, i) => {
    const t = i / c.fs;
    return f32(3 * Math.sin(2 * Math.PI * 10 * t) + Math.sin(2 * Math.PI * 137.5 * t + 0.4) + 0.25 * Math.sin(2 * Math.PI * 400 * t));
  });
  for (const i of c.gaps) x[i] = NaN;
  return x;
}

const asPsd = (c: Case): Psd => ({ density: Float64Array.from(c.density), df: c.fs / c.segment, segments: c.segments, segment: c.segment, length: c.length });
const dropoutOf = (flags: Flag[]) => flags.find((f) => f.name === 'dropout') as Flag;

describe('no gap-free segment: the longest gap-free stretch as one zero-padded periodogram', () => {
  it('equals scipy.signal.welch(x_stretch, nperseg=len(x_stretch), nfft=segment), in any chunks', () => {
    for (const c of cases) {
      for (const sizes of [[65536], [999, 2, 4097], [1], [3000, 1, 1]]) {
        const welch = new Welch(c.fs, { segment: c.segment, overlap: 0.5, window: 'hann' });
        inChunks(stretchSignal(c), (chunk) => welch.push(chunk, countMissing(chunk)), sizes);
        const psd = welch.result()!;
        expect([psd.segments, psd.length, psd.from ?? null, psd.covered], `${c.name}, chunks ${sizes}`).toEqual([c.segments, c.length, c.from, c.covered]);
        expect(psd.df).toBe(c.fs / c.segment);
        expect(maxRelative(psd.density, c.density), `${c.name}, chunks ${sizes}`).toBeLessThan(1e-10);
      }
    }
  });

  it('one missing sample in 5000: every spectral figure is given, from the 3000 samples before it, with a note and a dropout note', async () => {
    const c = byName('one missing sample');
    const spec = { spectrum: {}, bands: [[5, 50]], velocity_bands: [[5, 200]], octave_bands: [{ fraction: 1, from: 8, to: 125 }] } as never;
    const { row, result } = await reduce(stretchSignal(c), c.fs, spec);
    expect(row.dominant_frequency).toBe(c.dominant_frequency);
    expect(relative(row.spectral_centroid, c.spectral_centroid)).toBeLessThan(1e-9);
    expect(relative(row.band_5_50_rms, Math.sqrt(bandMeanSquare(asPsd(c), 5, 50)))).toBeLessThan(1e-9);
    for (const column of ['velocity_5_200_rms', 'oct1_16_rms', 'oct1_125_rms']) expect(row[column], column).toEqual(expect.any(Number));
    // At 1/3 Hz, a 5 Hz tone (the one-third-octave mid-band below octave 8 Hz, 0.61 Hz from its edge) would leak into it.
    expect(row.oct1_8_rms).toBeNull();
    expect(result.messages.join('\n')).toMatch(/x: no stretch of 4096 samples free of missing samples; spectrum from the longest gap-free stretch, 3000 samples from 0 s to 3 s, as one periodogram zero-padded to 4096 points \(bins every 0\.2441 Hz, resolution 0\.3333 Hz\)/);
    // 60 % of the recording under the spectrum, one sample missing in 5000: a note.
    const dropout = dropoutOf(result.quality[0].flags);
    expect(dropout.severity).toBe('note');
    expect(dropout.evidence.spectrum_coverage).toBe(0.6);
  });

  it('a bad cell on line 3002 of a CSV of 5000 samples gives the spectrum of the 3000 samples before it', async () => {
    const fs = 1000, lines = ['time,v'];
    for (let i = 0; i < 5000; i++) lines.push(`${(i / fs).toFixed(3)},${(Math.sin(2 * Math.PI * 10 * i / fs)).toFixed(5)}`);
    lines[3001] = '3.000,1.2.3';
    const path = join(tempDir(), 'bad.csv');
    writeFileSync(path, lines.join('\n') + '\n');
    const r = await reduceRecording({ recording: 'bad.csv', path, group: 'c', format: null, sampleRate: null, layout: null, channels: [channel({ name: 'v', scale: 1 })], labels: {}, durationS: null, spec: { spectrum: {}, bands: [[5, 50]] } as never, chunkFrames: 8191 });
    expect(r.reason).toBeUndefined();
    const row = r.rows[0] as Record<string, number>;
    // A 10 Hz tone of amplitude 1: the band holds its RMS, 1/√2 (common practice), within the Hann window's weighting of 300 periods.
    expect(row.dominant_frequency).toBeCloseTo(10, 0);
    expect(Math.abs(row.band_5_50_rms - Math.SQRT1_2)).toBeLessThan(0.01);
    expect(r.messages.join('\n')).toMatch(/3000 samples from 0 s to 3 s, as one periodogram zero-padded to 4096 points/);
    expect(dropoutOf(r.quality[0].flags).severity).toBe('note');
  });

  it('a stretch under half of the recording: the dropout flag warns that the spectral figures describe only part of it', async () => {
    const c = byName('longest in the middle');
    const { row, result } = await reduce(stretchSignal(c), c.fs, { spectrum: {} } as never);
    expect(row.dominant_frequency).toBe(c.dominant_frequency);
    const dropout = dropoutOf(result.quality[0].flags);
    // Three missing samples in 10,000 (0.03 %) would be a note: the warning is the spectrum's.
    expect(dropout.severity).toBe('warn');
    expect(dropout.evidence.spectrum_coverage).toBeCloseTo(0.3499, 12);
    expect(dropout.message).toMatch(/the spectrum rests on 35 % of the recording \(its longest gap-free stretch, 3499 samples from 2\.251 s\)/);
    expect(dropout.message).toMatch(/spectral figures describe only part of the recording/);
  });

  it('the same gaps where the spec computes no spectral figure: a note that says nothing of a spectrum, from the same stored quality result', async () => {
    const c = byName('longest in the middle');
    const path = join(tempDir(), 'x.wav');
    writeFileSync(path, encodeWav({ sampleRate: c.fs, channels: [stretchSignal(c).map((v) => v / SCALE)], encoding: 'float32' }));
    const job = (spec: object) => ({ recording: 'x.wav', path, group: 'g', format: null, sampleRate: null, layout: null, channels: [channel()], labels: {}, durationS: null, spec: spec as never, chunkFrames: 8191 });
    const withSpectrum = await computeRecording(job({ spectrum: {} })), without = await computeRecording(job({ windows: {} }));
    // The quality group's result does not depend on the spectral sections: a reused one serves either spec.
    expect(JSON.stringify(without.groups.quality.flags)).toBe(JSON.stringify(withSpectrum.groups.quality.flags));
    for (const [o, spec] of [[without, { windows: {} }], [withSpectrum, { windows: {} }]] as const) {
      const dropout = dropoutOf(assembleRecording(o, {}, spec as never).quality[0].flags);
      // Three missing samples in 10,000 (0.03 %, under the 0.1 % that warns): a note, as the README's flag table has it.
      expect(dropout.severity).toBe('note');
      expect(dropout.message).not.toMatch(/spectrum rests on|spectral figures/);
      expect(dropout.message).toMatch(/they move none by more than a fraction of a per cent/);
      expect('spectral' in dropout).toBe(false);
    }
    const told = dropoutOf(assembleRecording(without, {}, { spectrum: {} } as never).quality[0].flags);
    // The stored result of a spec without spectral figures, assembled under a spec that adds the spectrum section, has no
    // spectrum group output to vouch for: the wording follows the figures the row actually holds.
    expect(told.severity).toBe('note');
    const warned = dropoutOf(assembleRecording(withSpectrum, {}, { spectrum: {} } as never).quality[0].flags);
    expect(warned.severity).toBe('warn');
    expect(warned.message).toMatch(/the spectrum rests on 35 % of the recording/);
  });

  it('whole gap-free segments spanning a tenth of the recording warn the same way', async () => {
    const c = byName('one whole segment');
    const { row, result } = await reduce(stretchSignal(c), c.fs, { spectrum: {} } as never);
    expect(row.dominant_frequency).toBe(c.dominant_frequency);
    expect(relative(row.spectral_centroid, c.spectral_centroid)).toBeLessThan(1e-9);
    const dropout = dropoutOf(result.quality[0].flags);
    expect(dropout.severity).toBe('warn');
    expect(dropout.message).toMatch(/the spectrum rests on 10\.2 % of the recording \(1 gap-free segments of 4096 samples\)/);
  });

  it('the envelope\'s spectrum still takes whole gap-free segments only', () => {
    const c = byName('one missing sample');
    const welch = new Welch(c.fs, { segment: c.segment, overlap: 0.5, window: 'hann' }, false);
    const x = stretchSignal(c);
    welch.push(x, countMissing(x));
    expect(welch.result()).toBeNull();
  });
});
