// WAV files as writers get them wrong (test/fixtures/make-wav-edge-cases.py, Python's struct and numpy): 24-bit codes in
// 4-byte containers behind a plain PCM fmt chunk, chunks of odd size written without their pad byte, and Broadcast Wave
// origination dates and times (EBU Tech 3285) that name no instant, each judged by Python's datetime.
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { justification } from '../stages/read/wav-justify.js';
import { fixture, readAll, readJson, tempDir } from './helpers.js';

const cases = readJson(fixture('wav-edges', 'expected.json')).files;
const at = (name: string) => fixture('wav-edges', name);

/** The samples as the reference reads them (make-wav-edge-cases.py's <file>.f64: frames interleaved). */
function expected(name: string): number[][] {
  const b = readFileSync(`${at(name)}.f64`);
  const all = new Float64Array(b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength));
  const { channels, frames } = cases[name];
  return Array.from({ length: channels }, (_, c) => Array.from({ length: frames }, (_, i) => all[i * channels + c]));
}

describe('24-bit samples in 4-byte containers behind a plain PCM fmt chunk', () => {
  it('reads right-justified codes (top byte the sign) as numpy reads the int32 over 2^23, with a note saying how and why', async () => {
    const { rec, channels } = await readAll(at('rj24in32.wav'));
    expect(channels).toEqual(expected('rj24in32.wav'));
    expect([rec.bits, rec.encoding]).toEqual([24, 'pcm24in32']);
    expect(rec.notes).toHaveLength(1);
    expect(rec.notes[0]).toMatch(/^fmt chunk \(byte 20\) gives 24-bit PCM in 32-bit containers in a plain PCM fmt chunk \(not WAVE_FORMAT_EXTENSIBLE\).*read right-justified/);
    // libsndfile takes the same file another way (RMS 0.417, 0.417): the header alone cannot tell, so the note stays.
    expect(cases['rj24in32.wav'].soundfile.rms[0]).toBeGreaterThan(0.41);
  });

  it('reads left-justified codes (low byte zero: the WAV format\'s PCM rule) as before, and as libsndfile does, with no note', async () => {
    const { rec, channels } = await readAll(at('lj24in32.wav'));
    expect(channels).toEqual(expected('lj24in32.wav'));
    expect(rec.notes).toEqual([]);
    const rms = channels.map((c) => Math.sqrt(c.reduce((s, v) => s + v * v, 0) / c.length));
    cases['lj24in32.wav'].soundfile.rms.forEach((r: number, c: number) => expect(rms[c]).toBeCloseTo(r, 12));
  });

  it('keeps the PCM rule\'s reading (top 24 bits) with a note when the samples are neither left- nor right-justified', async () => {
    const { rec, channels } = await readAll(at('unclear24in32.wav'));
    expect(channels).toEqual(expected('unclear24in32.wav'));
    expect(rec.notes).toHaveLength(1);
    expect(rec.notes[0]).toMatch(/neither left- nor right-justified; they were read left-justified/);
  });

  it('judges the samples it looks at, silence as left-justified, in 2- to 6-byte containers', () => {
    const i32 = (xs: number[]) => new Uint8Array(Int32Array.from(xs).buffer);
    expect(justification(i32([0, 0, 0]), 4, 24, true)).toBe('left');
    expect(justification(i32([256, -512, 2 ** 31 - 256]), 4, 24, true)).toBe('left');
    expect(justification(i32([1, -1, 2 ** 23 - 1, -(2 ** 23)]), 4, 24, true)).toBe('right');
    expect(justification(i32([1, 2 ** 23]), 4, 24, true)).toBe('unclear'); // 2^23 needs a 25th bit
    // 20 bits in 3 bytes, big-endian: 0x00 0x00 0x01 is 1 (right); 0xff 0xff 0xf0 is -16 (left: low 4 bits zero).
    expect(justification(Uint8Array.from([0, 0, 1, 0xff, 0xff, 0xff]), 3, 20, false)).toBe('right');
    expect(justification(Uint8Array.from([0xff, 0xff, 0xf0]), 3, 20, false)).toBe('left');
    // Bounded: a sample past the look does not count.
    expect(justification(i32([256, 256, 3]), 4, 24, true, { most: 2 })).toBe('left');
  });
});

describe('a chunk of odd size written without its pad byte', () => {
  it('reads the data after an unpadded 17-byte LIST chunk (libsndfile refuses the file), naming the chunk and the fault', async () => {
    expect(cases['unpadded-list.wav'].soundfile.refused).toMatch(/data/);
    const { rec, channels } = await readAll(at('unpadded-list.wav'));
    expect(channels).toEqual(expected('unpadded-list.wav'));
    expect(rec.notes).toEqual([expect.stringMatching(/^the "LIST" chunk \(byte 36\) has an odd size \(17 bytes\) but no pad byte after it.*read from one byte earlier/)]);
  });

  it('finds the chunks after an odd data chunk whose pad byte is missing, as libsndfile does, and counts no stray bytes', async () => {
    const { rec, channels } = await readAll(at('unpadded-data.wav'));
    expect(channels).toEqual(expected('unpadded-data.wav'));
    expect(cases['unpadded-data.wav'].soundfile.rms[0]).toBeCloseTo(cases['unpadded-data.wav'].rms[0], 12);
    expect(rec.notes).toEqual([expect.stringMatching(/^the data chunk has an odd size \(7999 bytes\) but no pad byte after it/)]);
  });

  it('still refuses a file whose chunks lie whole neither way', async () => {
    const b = Buffer.from(readFileSync(at('unpadded-list.wav')));
    b.write('dat\x01', 61, 'latin1'); // the data chunk's id, one byte early, spoilt
    const path = join(tempDir(), 'spoilt.wav');
    writeFileSync(path, b);
    await expect(readAll(path)).rejects.toThrow(/no data chunk before byte/);
  });
});

// EBU Tech 3285 (v2, 2011): OriginationDate yyyy-mm-dd, OriginationTime hh:mm:ss, any separator; the judgement of each
// file's fields is Python's datetime's (a calendar day, hours 0–23, minutes and seconds 0–59).
describe('Broadcast Wave origination', () => {
  const bexts = Object.keys(cases).filter((n) => n.startsWith('bext-'));

  it.each(bexts)('%s starts where Python\'s datetime puts it, or not at all, with its samples whole', async (name) => {
    const { rec, channels } = await readAll(at(name));
    const c = cases[name];
    expect(rec.startTime?.toISOString().replace('.000Z', 'Z') ?? null).toBe(c.start_time);
    expect(channels).toEqual(expected(name));
    const written = `${c.origination.date}${c.origination.time}`;
    if (c.judged === 'start') expect(rec.notes).toEqual([]);
    else if (c.judged === 'midnight') expect(rec.notes).toEqual([expect.stringMatching(/origination time is blank under the date 2026-03-14: the start is taken as that day's midnight \(UTC\)/)]);
    else {
      const why = { unset: 'a date of zeros is a recorder whose clock was never set', 'no calendar day': `${c.origination.date} is no day of the calendar`, 'time out of range': `the time ${c.origination.time} is out of range` }[c.judged as string];
      expect(rec.notes).toEqual([expect.stringContaining(`"${written}" name no instant: ${why}`)]);
      expect(rec.notes[0]).toMatch(/the file's modification time stands in for it/);
    }
  });
});
