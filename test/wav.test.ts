// The WAV reader against files written, and decoded, by independent tools (sox 14.4.2, Python's wave and struct).
import { readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { RecordingError } from '../stages/read/recording.js';
import { fixture, readAll, readJson, tempDir } from './helpers.js';

const wavs = readdirSync(fixture('wav')).filter((f) => f.endsWith('.wav') && f !== 'mulaw.wav');

describe('WAV reader against independently written files', () => {
  it.each(wavs)('%s decodes to the samples the independent tool expects', async (name) => {
    const expected = readJson(fixture('wav', `${name}.expected.json`));
    const { rec, channels } = await readAll(fixture('wav', name));
    expect(rec.sampleRate).toBe(expected.rate);
    expect(channels.length).toBe(expected.channels.length);
    for (let c = 0; c < channels.length; c++) {
      expect(channels[c].length).toBe(expected.channels[c].length);
      // sox prints 11 significant digits; Python's values are exact.
      const worst = Math.max(...channels[c].map((v, i) => Math.abs(v - expected.channels[c][i])));
      expect(worst).toBeLessThan(1e-9);
    }
  });

  it('reads WAVE_FORMAT_EXTENSIBLE (sox writes it for 3 channels of 24 bits) with its valid bits', async () => {
    const head = readFileSync(fixture('wav', 'pcm24-3ch.wav'));
    expect(head.readUInt16LE(20)).toBe(0xfffe);
    const { rec } = await readAll(fixture('wav', 'pcm24-3ch.wav'));
    expect(rec.bits).toBe(24);
    expect(rec.encoding).toBe('pcm24');
  });

  it('skips unknown and odd-sized chunks and takes the start time from bext (EBU Tech 3285)', async () => {
    const expected = readJson(fixture('wav', 'struct-chunks.wav.expected.json'));
    const { rec } = await readAll(fixture('wav', 'struct-chunks.wav'));
    expect(rec.startTime?.toISOString()).toBe(expected.start_time);
  });

  it('decodes µ-law (ITU-T G.711) on its 14-bit linear scale; its values are checked in wav-formats.test.ts', async () => {
    const { rec, channels } = await readAll(fixture('wav', 'mulaw.wav'));
    expect([rec.encoding, rec.bits, channels[0].length]).toEqual(['mulaw', 14, 80]);
  });

  it('refuses a file cut short, saying how much is missing', async () => {
    const bytes = readFileSync(fixture('wav', 'pcm16-2ch.wav'));
    const path = join(tempDir(), 'cut.wav');
    writeFileSync(path, bytes.subarray(0, bytes.length - 101));
    const err = await readAll(path).catch((e) => e);
    expect(err).toBeInstanceOf(RecordingError);
    expect(err.message).toMatch(/ends 101 bytes early/);
    expect(err.message).toMatch(/recapture or copy it again/);
  });

  it('refuses what is not RIFF/WAVE', async () => {
    const path = join(tempDir(), 'not.wav');
    writeFileSync(path, 'time,a\n0,1\n');
    await expect(readAll(path)).rejects.toThrow(/not a RIFF\/WAVE file/);
  });
});
