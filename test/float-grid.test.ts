// Converter codes stored as floating-point numbers: with bits and range declared, the resolution and saturation flags judge
// them as they judge the same codes stored as integers, once the samples are seen to lie on the declared steps.
// Files and figures: test/fixtures/make-float-grid-fixtures.py (libsndfile, numpy, scipy.signal.resample, h5py).
import { copyFileSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { reduceRecording } from '../pipeline/reduce/compute.js';
import type { ChannelDeclaration } from '../spec/archive.js';
import type { Flag } from '../stages/quality/flag.js';
import { declaredGrid, foldGrid, GRID_SLACK, noTally, storageRoundoff } from '../stages/quality/float-grid.js';
import { fixture, quern, readJson, tempDir } from './helpers.js';

const expected = JSON.parse(readFileSync(fixture('float-grid', 'expected.json'), 'utf8'));
const volts = (over: Partial<ChannelDeclaration> = {}): ChannelDeclaration =>
  ({ name: 'v', quantity: 'voltage', unit: 'V', scale: 10, offset: 0, range: [-10, 10], bits: 12, max_frequency_hz: null, ...over });

async function reduce(file: string, decl: ChannelDeclaration, reader = {}) {
  const r = await reduceRecording({ recording: file, path: fixture('float-grid', file), group: 'rig', format: null, sampleRate: null, layout: null, reader, channels: [decl], labels: {}, durationS: null, spec: {}, chunkFrames: 1500 });
  expect(r.reason).toBeUndefined();
  const flag = (name: string) => r.quality[0].flags.find((f) => f.name === name) as Flag;
  return { row: r.rows[0] as Record<string, any>, flag, notes: r.messages };
}

describe('12-bit codes as 16-bit PCM, float32 WAV and CSV, one declaration (bits: 12, range: [-10, 10])', () => {
  const a = expected.a12;
  it('the same step, steps spanned, bits and SNR as numpy gives from the codes: σ / (Δ/√12), Δ = span / 2^bits (IEEE Std 1241)', async () => {
    const pcm = await reduce('a12-pcm16.wav', volts());
    const float = await reduce('a12-float32.wav', volts());
    for (const { row, flag } of [pcm, float]) {
      expect(row.step_size).toBe(a.step_size);
      expect(row.resolution_bits).toBeCloseTo(a.resolution_bits, 12);
      expect(row.quantisation_snr_db).toBeCloseTo(a.quantisation_snr_db, 9);
      expect(flag('resolution').evidence.steps_spanned).toBe(a.steps_spanned);
      // Below the default 20 dB (README: fail below 20 dB): too coarse.
      expect(flag('resolution').severity).toBe('fail');
      expect(flag('resolution').not_assessed).toBeUndefined();
    }
    // The float copy holds exactly the integer copy's values, so its figures and message are the same.
    expect(float.row.quantisation_snr_db).toBe(pcm.row.quantisation_snr_db);
    expect(float.flag('resolution').message).toBe(pcm.flag('resolution').message);
  });

  it('a CSV of the same codes printed to six decimals lies on the grid within its printing, and gives the same verdict', async () => {
    const csv = await reduce('a12.csv', volts());
    expect(csv.row.step_size).toBe(a.csv.step_size);
    expect(csv.row.resolution_bits).toBeCloseTo(a.csv.resolution_bits, 9);
    expect(csv.row.quantisation_snr_db).toBeCloseTo(a.csv.quantisation_snr_db, 6);
    expect(csv.flag('resolution').severity).toBe('fail');
    expect(csv.notes.join('\n')).not.toMatch(/do not lie on/);
  });

  it('the same samples resampled by scipy.signal.resample leave the grid: a note says so, and no step is judged', async () => {
    expect(a.resampled_off_share).toBeGreaterThan(0.9);
    const { row, flag, notes } = await reduce('a12-resampled-float32.wav', volts());
    const f = flag('resolution');
    expect([f.severity, f.value, f.not_assessed]).toEqual(['ok', null, 'floating-point samples off the declared converter steps (filtered, resampled or rescaled)']);
    expect([row.step_size, row.resolution_bits, row.quantisation_snr_db]).toEqual([null, null, null]);
    expect(notes.join('\n')).toMatch(/v: bits: 12 and range \[-10, 10\] V declare converter steps of 0\.004883 V, but the samples do not lie on them: \d+ of the \d+ changes checked are no whole number of steps .*check bits, range and scale in archive\.yaml/);
  });

  it('a range declared twice too wide halves the step the codes take: their odd changes lie half a step off, and are named', async () => {
    const { row, notes } = await reduce('a12-float32.wav', volts({ range: [-20, 20], scale: 10 }));
    expect(row.step_size).toBeNull();
    expect(notes.join('\n')).toMatch(/0\.50 of a step off/);
  });

  it('declared twice too narrow, the codes change by whole pairs of steps: the step the data take is two of them', async () => {
    const { row, flag } = await reduce('a12-float32.wav', volts({ range: [-5, 5] }));
    expect(row.step_size).toBe(a.step_size);
    expect(flag('resolution').evidence.data_grid_steps).toBe(2);
  });
});

describe('24-bit codes as 24-bit PCM, float32 WAV and float64 volts in HDF5', () => {
  const b = expected.b24;
  const hdf5 = { hdf5: { datasets: ['v'], channel_axis: null, sample_rate_attribute: 'fs', start_time_attribute: null } };
  it('fill step_size, resolution_bits, quantisation_snr_db and saturation_fraction alike, with numpy\'s figures', async () => {
    const all = [
      await reduce('b24-pcm24.wav', volts({ bits: 24 })),
      await reduce('b24-float32.wav', volts({ bits: 24 })),
      // Stored in volts: scale 1, the same range and bits, so the same step in volts.
      await reduce('b24-float64.h5', volts({ bits: 24, scale: 1 }), hdf5),
    ];
    for (const { row, flag } of all) {
      expect(row.step_size).toBe(b.step_size);
      expect(row.resolution_bits).toBeCloseTo(b.resolution_bits, 9);
      expect(row.quantisation_snr_db).toBeCloseTo(b.quantisation_snr_db, 9);
      expect(flag('resolution').severity).toBe('ok');
      // Clipped at the extreme codes: the most positive is a step short of the range (two's complement, common practice).
      expect(flag('saturation').evidence.samples).toBe(b.at_extreme_codes);
      expect(row.saturation_fraction).toBe(b.at_extreme_codes / 4000);
      expect(flag('saturation').severity).toBe('fail');
    }
  });

  it('without a declared range, floats keep no step: the check is named as not made, and says to declare the range', async () => {
    const { row, flag } = await reduce('b24-float32.wav', volts({ bits: 24, range: null }));
    expect(row.step_size).toBeNull();
    expect(flag('resolution').not_assessed).toBe('floating-point samples keep no converter step: declare range with bits in archive.yaml');
  });
});

describe('the grid of floating-point samples', () => {
  const g = declaredGrid(false, 12, [-10, 10], 0, 'float32')!;
  it('code width = range span / 2^bits (IEEE Std 1241); integer codes and undeclared channels keep none', () => {
    expect(g.step).toBe(20 / 4096);
    expect(declaredGrid(true, 12, [-10, 10], 0, 'pcm16')).toBeNull();
    expect(declaredGrid(false, null, [-10, 10], 0, 'float32')).toBeNull();
    expect(declaredGrid(false, 12, null, 0, 'float32')).toBeNull();
    // Unit roundoff: half, single and double precision of IEEE 754 (2^-11, 2^-24, 2^-53; common practice).
    expect([storageRoundoff('float16'), storageRoundoff('float32'), storageRoundoff('float32 (RF64)'), storageRoundoff('float64'), storageRoundoff('text')]).toEqual([2 ** -11, 2 ** -24, 2 ** -24, 2 ** -53, 2 ** -53]);
  });

  it('whole steps, with an offset and float32 rounding, lie on it; a change a third of a step off, or under half a step, does not', () => {
    const step = g.step, at = (k: number) => Math.fround((k * step) / 10) * 10;
    expect(foldGrid(noTally(), Float64Array.from([0, 3, 9, -6, -6, 1500].map(at)), g)).toMatchObject({ grid: 3, told: 4, off: 0 });
    expect(foldGrid(noTally(), Float64Array.from([0, 1, 4].map(at)), g)).toMatchObject({ grid: 1, off: 0 });
    expect(foldGrid(noTally(), Float64Array.from([0, 1, 1 + 1 / 3, 2 + 1 / 3].map((k) => k * step)), g, 100)).toMatchObject({ off: 1, told: 3, firstOffAt: 102 });
    expect(foldGrid(noTally(), Float64Array.from([0, 0.4 * step]), g).off).toBe(1);
    // A pressure channel of 0–16 bar stored as ±1 around an offset of 8 bar: its float32 rounding is of the stored value.
    const p = declaredGrid(false, 16, [0, 16], 8, 'float32')!, bar = (k: number) => Math.fround((k * p.step) / 8) * 8 + 8;
    expect(foldGrid(noTally(), Float64Array.from([-32768, 32767, 5, -7].map(bar)), p)).toMatchObject({ grid: 1, told: 3, off: 0 });
    // Within the slack a hundredth of a step allows: decimal text printed short.
    expect(foldGrid(noTally(), Float64Array.from([0, (1 + GRID_SLACK / 2) * step]), g).off).toBe(0);
  });

  it('where float32 rounding of the values reaches a quarter of a step, a change tells nothing (24 bits in volts near full scale)', () => {
    const g24 = declaredGrid(false, 24, [-10, 10], 0, 'float32')!;
    const t = foldGrid(noTally(), Float64Array.from([9.5, 9.5 + 3 * g24.step].map(Math.fround)), g24);
    expect([t.told, t.off]).toEqual([0, 0]);
  });
});

describe('the run\'s terminal', () => {
  it('judges the float copy as the integer one, and names the resampled copy on the NOT CHECKED line', async () => {
    const archive = tempDir();
    for (const f of ['a12-pcm16.wav', 'a12-float32.wav', 'a12-resampled-float32.wav']) copyFileSync(fixture('float-grid', f), join(archive, f));
    writeFileSync(join(archive, 'archive.yaml'), 'groups:\n  - { name: rig, match: "*.wav", channels: [{ name: v, quantity: voltage, unit: V, scale: 10, range: [-10, 10], bits: 12 }] }\n');
    writeFileSync(join(archive, 'reduction.yaml'), 'statistics: {}\n');
    const out = join(tempDir(), 'out');
    const r = await quern('reduce', archive, '--out', out, '--jobs', '1');
    expect(r.code).toBe(0);
    const lines = r.stdout.split('\n');
    expect(lines.filter((l) => l.includes('NOT CHECKED'))).toEqual(['  NOT CHECKED resolution on 1 channel (group rig): floating-point samples off the declared converter steps (filtered, resampled or rescaled)']);
    // The terminal gathers a channel's failure over its recordings into one line; quality.json holds each recording's.
    expect(lines.filter((l) => /FAIL +rig v: resolution in 2 of 3 recordings, the latest a12-(pcm16|float32)\.wav: 6 steps of 0\.004883 V used/.test(l))).toHaveLength(1);
    const quality = readJson(join(out, 'quality.json'));
    const resolutionOf = (name: string) => quality.recordings.find((x: { recording: string }) => x.recording === name).channels[0].flags.find((f: { name: string }) => f.name === 'resolution');
    const [pcm, float] = ['a12-pcm16.wav', 'a12-float32.wav'].map(resolutionOf);
    expect([pcm.severity, float.severity]).toEqual(['fail', 'fail']);
    expect(float.message).toBe(pcm.message);
    expect(pcm.message).toMatch(/^6 steps of 0\.004883 V used/);
  });
});
