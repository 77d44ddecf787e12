// The FLAC reader against files written by the reference encoder (flac 1.4.2) and decoded by `flac -d`
// (test/fixtures/make-format-fixtures.py): 8 to 32 bits, 1 to 8 channels, fixed and LPC subframes, stereo decorrelation.
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { RecordingError } from '../stages/read/recording.js';
import { expectedSamples, formatFixtures } from './format-fixtures.js';
import { fixture, readAll, tempDir } from './helpers.js';

const flacs = formatFixtures.filter((f) => f.file.endsWith('.flac'));

describe('FLAC reader against the reference encoder and decoder', () => {
  it.each(flacs.map((f) => [f.file, f] as const))('%s equals `flac -d` sample for sample', async (_, f) => {
    const { rec, channels } = await readAll(fixture('formats', f.file));
    expect([rec.sampleRate, rec.frames, rec.bits, rec.channelCount]).toEqual([f.rate, f.frames, f.bits, f.channels]);
    const want = expectedSamples(f);
    for (let c = 0; c < f.channels; c++) expect(Float64Array.from(channels[c])).toEqual(want[c]);
  });

  it('reads the start time from a declared Vorbis comment tag, and only then', async () => {
    const path = fixture('formats', 'flac24-3ch.flac');
    expect((await readAll(path)).rec.startTime).toBeNull();
    expect((await readAll(path, { flac: { start_time_tag: 'start_time' } })).rec.startTime?.toISOString()).toBe('2026-11-16T22:00:00.000Z');
    await expect(readAll(path, { flac: { start_time_tag: 'RECORDED' } })).rejects.toThrow(/no RECORDED tag/);
    // A day not in the calendar is refused, not rolled over into March (the comment block carries no checksum to fix).
    const bytes = Buffer.from(readFileSync(path));
    bytes.write('2026-02-30', bytes.indexOf('2026-11-16T22:00:00Z'), 'latin1');
    const edited = join(tempDir(), 'tagged.flac');
    writeFileSync(edited, bytes);
    await expect(readAll(edited, { flac: { start_time_tag: 'START_TIME' } })).rejects.toThrow(/tag START_TIME holds "2026-02-30T22:00:00Z", not an ISO 8601 date-time; correct the tag/);
  });

  it('reports a damaged frame by its number and byte position', async () => {
    const bytes = Buffer.from(readFileSync(fixture('formats', 'flac16-2ch.flac')));
    bytes[bytes.length - 300] ^= 0x10;
    const path = join(tempDir(), 'damaged.flac');
    writeFileSync(path, bytes);
    const err = await readAll(path).catch((e) => e);
    expect(err).toBeInstanceOf(RecordingError);
    expect(err.message).toMatch(/^frame \d+ at byte \d+: .*(CRC|reserved|sync|past)/);
  });

  it('reports a file cut short with the samples missing', async () => {
    const bytes = readFileSync(fixture('formats', 'flac16-2ch.flac'));
    const path = join(tempDir(), 'cut.flac');
    writeFileSync(path, bytes.subarray(0, bytes.length - 1000));
    await expect(readAll(path)).rejects.toThrow(/the file ends inside this frame|ends after \d+ of the 5000 samples/);
  });
});
