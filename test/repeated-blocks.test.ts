// Repeated blocks: stretches that repeat the samples a whole block before them, against the stretches numpy planted (closed
// form) and numpy's exact comparison x[i] == x[i − L] of the stored samples. Recordings: test/fixtures/make-repeat-vectors.py.
import { describe, expect, it } from 'vitest';
import type { ChannelDeclaration } from '../spec/archive.js';
import { reduceRecording } from '../pipeline/reduce/compute.js';
import { TileRepeats, type RepeatStretch } from '../stages/dsp/tile-repeats.js';
import type { Flag } from '../stages/quality/flag.js';
import { fixture, readAll, readJson } from './helpers.js';

const ref = readJson(fixture('repeat-vectors.json'));
type RepeatCase = { subtype: string; lag: number; first: number | null; repeated: number; equal_at_lag: number; run_at_lag: [number, number] | null };
const cases = ref.cases as Record<string, RepeatCase>;
const fs = ref.fs as number;
const CHUNKS = [1000, 4096, 65536];

async function repeatsFlag(name: string, chunkFrames: number) {
  const bits = cases[name].subtype === 'PCM_16' ? 16 : 24;
  const decl: ChannelDeclaration = { name: 'acc', quantity: 'acceleration', unit: 'm/s^2', scale: 500, offset: 0, range: [-500, 500], bits, max_frequency_hz: 4500 };
  const r = await reduceRecording({ recording: name, path: fixture('repeats', `${name}.wav`), group: 'g', format: null, sampleRate: null, layout: null, channels: [decl], labels: {}, durationS: null, spec: {}, chunkFrames });
  expect(r.reason).toBeUndefined();
  return { flag: r.quality[0].flags.find((f) => f.name === 'repeated_blocks') as Flag, row: r.rows[0] as Record<string, any> };
}

/** The stretches the finder reports over the stored samples, fed in chunks of `chunk`. */
async function stretchesOf(name: string, chunk: number) {
  const { channels } = await readAll(fixture('repeats', `${name}.wav`));
  const x = Float64Array.from(channels[0], (v) => v * 500);
  const found: RepeatStretch[] = [];
  const finder = new TileRepeats((s) => found.push(s));
  for (let a = 0; a < x.length; a += chunk) finder.push(x.slice(a, a + chunk));
  finder.end();
  return found;
}

describe('repeated_blocks: blocks sent again', () => {
  for (const name of ['resent_256_16', 'resent_256_float', 'resent_1024_16', 'resent_1024_float']) {
    const c = cases[name];
    for (const chunk of CHUNKS) {
      it(`${name}, chunks of ${chunk}: one stretch, numpy's run of x[i] == x[i − ${c.lag}] holding the planted block`, async () => {
        // numpy's run of equal samples at the lag is the planted stretch, give or take a sample equal by chance at its edges.
        const [a, b] = c.run_at_lag!;
        expect(Math.abs(a - c.first!)).toBeLessThanOrEqual(1);
        expect(Math.abs(b - a - c.repeated)).toBeLessThanOrEqual(2);
        expect(await stretchesOf(name, chunk)).toEqual([{ start: a, end: b, lag: c.lag }]);
        const { flag, row } = await repeatsFlag(name, chunk);
        expect(flag.severity).toBe('warn');
        expect(flag.evidence.first_repeat_s).toBeCloseTo(a / fs, 12);
        expect(flag.evidence.first_block_samples).toBe(c.lag);
        expect(flag.evidence.repeated_samples).toBe(b - a);
        expect(row.repeated_fraction).toBeCloseTo((b - a) / ref.n, 12);
        expect(flag.message).toContain(`first at ${Number((a / fs).toPrecision(4))} s`);
        expect(flag.message).toContain(`block of ${c.lag} samples`);
        expect(flag.message).toContain('every figure counts the repeated data as measured');
      });
    }
  }

  it("the tester's transfer (256-sample block sent again 20 times from 0.4 s) reads first at 0.4 s, block 256, 0.4 s repeated", async () => {
    // Closed form: blocks 20 to 39 of 256 samples at 12.8 kHz, 0.4 to 0.8 s.
    const { flag } = await repeatsFlag('resent_256_float', 65536);
    expect(flag.evidence.first_repeat_s).toBe(0.4);
    expect(flag.evidence.first_block_samples).toBe(256);
    expect(flag.evidence.repeated_s).toBe(0.4);
    expect(flag.message).toContain('0.4 s in all');
  });
});

describe('repeated_blocks: clean and synthetic signals', () => {
  for (const name of ['clean_16', 'clean_float']) {
    it(`${name}: band-limited noise never repeats a tile exactly (common practice): ok, nothing found`, async () => {
      for (const chunk of CHUNKS) {
        expect(await stretchesOf(name, chunk)).toEqual([]);
        const { flag, row } = await repeatsFlag(name, chunk);
        expect(flag.severity).toBe('ok');
        expect(row.repeated_fraction).toBe(0);
      }
    });
  }
  for (const name of ['locked_tone_16', 'locked_tone_float']) {
    const c = cases[name];
    it(`${name}: a tone locked to the sampling repeats throughout (numpy: every sample from ${c.first} equals the one ${c.lag} before): ok, named synthetic`, async () => {
      expect(c.run_at_lag).toEqual([c.first, ref.n]);
      for (const chunk of CHUNKS) {
        expect(await stretchesOf(name, chunk)).toEqual([{ start: c.first, end: ref.n, lag: c.lag }]);
        const { flag } = await repeatsFlag(name, chunk);
        expect(flag.severity).toBe('ok');
        expect(flag.message).toContain(`repeats exactly every ${c.lag} samples`);
        expect(flag.message).toContain('a synthetic or looped signal');
      }
    });
  }

  it('leaves one value held (flatline, dropout) and missing samples (dropout) to their flags', () => {
    // A held value and NaN repeat trivially at every lag; neither is a block sent again.
    const x = new Float64Array(20000);
    for (let i = 0; i < x.length; i++) x[i] = Math.sin(i * 0.7) * 1000 + ((i * 7919) % 13); // varied, not periodic at a tile lag
    x.fill(3.5, 4000, 9000);
    x.fill(NaN, 12000, 17000);
    const found: RepeatStretch[] = [];
    const finder = new TileRepeats((s) => found.push(s));
    finder.push(x);
    finder.end();
    expect(found).toEqual([]);
  });
});
