// WAV in full (PCM of 1–64 bits, RIFX, RF64, BW64, G.711) against files written and decoded by independent tools:
// sox 14.4.2, ffmpeg 5.1, libsndfile 1.2 (python3-soundfile), Python's struct and audioop, numpy (test/fixtures/make-format-fixtures.py).
import { mkdtemp, open, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { readInterleaved } from '../stages/read/interleaved.js';
import { g711Linear } from '../stages/read/g711.js';
import { openRecording } from '../stages/read/open.js';
import { readWavHeader } from '../stages/read/wav.js';
import { expectedSamples, formatFixture, formatFixtures, manifest, sparseRf64 } from './format-fixtures.js';
import { fixture, readAll } from './helpers.js';

const wavs = formatFixtures.filter((f) => f.file.endsWith('.wav'));

describe('WAV reader against independently written and decoded files', () => {
  it.each(wavs.map((f) => [f.file, f] as const))('%s equals its independent decoding exactly', async (_, f) => {
    const { rec, channels } = await readAll(fixture('formats', f.file));
    expect(rec.sampleRate).toBe(f.rate);
    expect(rec.frames).toBe(f.frames);
    if (f.bits) expect(rec.bits).toBe(f.bits);
    const want = expectedSamples(f);
    expect(channels.length).toBe(f.channels);
    // Exact: integer codes divided by a power of two are exact doubles, and the decoders agree code for code.
    for (let c = 0; c < f.channels; c++) expect(Float64Array.from(channels[c])).toEqual(want[c]);
  });

  it('deinterleaves 16-bit little-endian codes of 1 to 9 channels as Node\'s Buffer.readInt16LE reads them, divided by 32768', async () => {
    const dir = await mkdtemp(join(tmpdir(), 'quern-pcm16-'));
    try {
      for (let channels = 1; channels <= 9; channels++) {
        const frames = 1000 + channels, bytes = Buffer.alloc(2 * frames * channels);
        for (let k = 0; k < frames * channels; k++) bytes.writeInt16LE(((k * 7919 + channels * 104729) % 65536) - 32768, 2 * k);
        const path = join(dir, `c${channels}.raw`);
        await writeFile(path, bytes);
        const file = await open(path, 'r');
        const got: number[][] = Array.from({ length: channels }, () => []);
        for await (const chunk of readInterleaved(file, { sampleType: 'int16', byteOrder: 'little', channels, offset: 0, frames }, 333, 'data')) chunk.forEach((ch, c) => got[c].push(...ch));
        await file.close();
        for (let c = 0; c < channels; c++) expect(got[c], `${channels} channels, channel ${c}`).toEqual(Array.from({ length: frames }, (_, i) => bytes.readInt16LE(2 * (i * channels + c)) / 32768));
      }
    } finally {
      await rm(dir, { recursive: true, force: true });
    }
  });

  it('takes the resolution from the valid bits, not the container: 12 bits in 16-bit containers', async () => {
    const rec = await openRecording(fixture('formats', 'pcm12in16.wav'));
    expect([rec.bits, rec.encoding]).toEqual([12, 'pcm12in16']);
    await rec.close();
  });

  it('decodes every G.711 character as the standard tabulates it (Python audioop, ITU-T G.711 Tables 1a and 2a)', () => {
    for (const [law, file] of [['µ-law', 'g711-mulaw-all.wav'], ['A-law', 'g711-alaw-all.wav']] as const) {
      const linear16 = formatFixture(file).linear16!;
      const scale = law === 'µ-law' ? 4 : 8; // 16-bit linear = the standard's 14-bit (µ-law) or 13-bit (A-law) value × 4 or × 8
      expect(Array.from({ length: 256 }, (_, c) => g711Linear[law](c) * scale)).toEqual(linear16);
    }
    // Spot values of the tables: µ-law 0x80 → +8031 and 0x00 → −8031, 0xFF → 0; A-law 0xD5 → +1, 0x55 → −1, 0xAA → +4032 (from memory).
    expect([g711Linear['µ-law'](0x80), g711Linear['µ-law'](0x00), g711Linear['µ-law'](0xff)]).toEqual([8031, -8031, 0]);
    expect([g711Linear['A-law'](0xd5), g711Linear['A-law'](0x55), g711Linear['A-law'](0xaa)]).toEqual([1, -1, 4032]);
  });

  it('refuses IMA ADPCM by name rather than decode it into wrong numbers', async () => {
    await expect(readAll(fixture('formats', 'ima-adpcm.wav'))).rejects.toThrow(/0x0011 \(IMA ADPCM\) is not supported/);
  });

  it('streams an RF64 file past 4 GiB (a sparse file: header and last samples written by Python, a hole between)', async () => {
    const big = manifest.rf64_big;
    const path = sparseRf64();
    const rec = await openRecording(path);
    expect(rec.frames).toBe(big.data_bytes / 8);
    expect(rec.frames! * 8).toBeGreaterThan(2 ** 32);
    expect(rec.encoding).toBe('float64 (RF64)');
    const first = (await rec.chunks().next()).value as Float64Array[];
    expect(Array.from(first[0].subarray(0, 5))).toEqual(big.head);
    expect(first[0][5]).toBe(0);
    await rec.close();
    // The last frames, read where the header says they lie (the whole stream is read in the system checks).
    const file = await open(path, 'r');
    const h = await readWavHeader(file, (await file.stat()).size);
    expect(h.data).toEqual({ offset: big.data_offset, size: big.data_bytes });
    const last = readInterleaved(file, { sampleType: 'float64', byteOrder: 'little', channels: 1, offset: h.data.offset + (h.frames - 5) * 8, frames: 5 }, 8, 'data');
    expect(Array.from(((await last.next()).value as Float64Array[])[0])).toEqual(big.tail);
    await file.close();
  });
});
