// Declared converter bits wider than the file's integer codes: the file's own step is used, and a note says so.
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { fixture, tempDir } from './helpers.js';
import { reduceRecording } from '../pipeline/reduce/compute.js';
import { effectiveBits } from '../pipeline/reduce/header-notes.js';
import { encodeWav } from '../scripts/wav-file.js';
import { channel } from './reduce-signal.js';

const spec = { statistics: {} };
const job = (path: string, channels: ReturnType<typeof channel>[]) =>
  ({ recording: 'x.wav', path, group: 'rig', format: null, sampleRate: null, layout: null, channels, labels: {}, durationS: null, spec, chunkFrames: 4093 });

describe('bits: 24 declared on 16-bit PCM', () => {
  // test/fixtures/wav/pywave-pcm16.wav: written by Python's wave module, 16-bit codes (test/fixtures/make-fixtures.py).
  it('notes both widths and which one is used, and steps at the file\'s 16 bits: LSB = full-scale range / 2^N (IEEE Std 1241, common practice)', async () => {
    const r = await reduceRecording(job(fixture('wav', 'pywave-pcm16.wav'), [channel({ name: 'a', scale: 10, bits: 24 })]));
    expect(r.reason).toBeUndefined();
    expect(r.messages[0]).toMatch(/^channel a declares bits: 24, but the file holds 16-bit samples: .* so its 16 bits are used .*; declare bits: 16 in archive\.yaml group "rig"/);
    for (const row of r.rows) expect(row.step_size).toBe((2 * 10) / 2 ** 16);
  });

  it('a dead channel one 16-bit code wide fails flatline (a spread of at most 2 converter steps), as it does declared at 16 bits', async () => {
    // Codes 0 and 1 in turn: arithmetic, one step of a 16-bit converter.
    const codes = Float64Array.from({ length: 4000 }, (_, i) => (i % 2) / 32768);
    const path = join(tempDir(), 'dead.wav');
    writeFileSync(path, encodeWav({ sampleRate: 4000, channels: [codes], encoding: 'pcm16' }));
    for (const bits of [16, 24]) {
      const r = await reduceRecording(job(path, [channel({ name: 'a', scale: 10, bits })]));
      expect(r.quality[0].flags.find((f) => f.name === 'flatline')?.severity).toBe('fail');
    }
  });

  it('a narrower declaration (12-bit converter in 16-bit codes) keeps its own bits; float data keeps the declared ones', () => {
    expect(effectiveBits(12, { bits: 16, normalised: true })).toBe(12);
    expect(effectiveBits(24, { bits: 16, normalised: true })).toBe(16);
    expect(effectiveBits(null, { bits: 16, normalised: true })).toBe(16);
    expect(effectiveBits(16, { bits: null, normalised: false })).toBe(16);
  });
});
