// The WAV reader against files written, and decoded, by independent tools (sox 14.4.2, Python's wave and struct).
import { mkdirSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { RecordingError } from '../stages/read/recording.js';
import { bextDateNote, bextStartTime } from '../stages/read/wav.js';
import { fixture, quern, readAll, readJson, tempDir } from './helpers.js';

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

  // EBU Tech 3285: OriginationDate is yyyy-mm-dd and OriginationTime hh:mm:ss; a value that names no instant is no start.
  it('takes no start from a bext date that is no calendar day or time (0000-00-00, 30 February, month 13, hour 24)', () => {
    const bext = (date: string, time: string) => { const b = Buffer.alloc(602); b.write(date, 320, 'latin1'); b.write(time, 330, 'latin1'); return b; };
    expect(bextStartTime(bext('2026-11-09', '23:59:59'))?.toISOString()).toBe('2026-11-09T23:59:59.000Z');
    expect(bextStartTime(bext('2024-02-29', '00:00:00'))?.toISOString()).toBe('2024-02-29T00:00:00.000Z'); // a leap day
    for (const [date, time] of [['0000-00-00', '00:00:00'], ['2026-02-30', '12:00:00'], ['2026-13-45', '99:00:00'], ['2026-11-09', '24:00:00'], ['2025-02-29', '00:00:00'], ['2026-11-09', '12:60:00']]) {
      expect(bextStartTime(bext(date, time)), `${date} ${time}`).toBeNull();
      expect(bextDateNote(bext(date, time))).toContain(`"${date}${time}" name no instant`);
    }
    // A valid date, and a field left blank (no date at all), need no note.
    expect(bextDateNote(bext('2026-11-09', '23:59:59'))).toBeNull();
    expect(bextDateNote(Buffer.alloc(602))).toBeNull();
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

  it('names an empty file as empty, whatever its format, rather than as a file of the wrong format', async () => {
    for (const name of ['empty.wav', 'empty.csv', 'empty.flac']) {
      const path = join(tempDir(), name);
      writeFileSync(path, '');
      await expect(readAll(path)).rejects.toThrow(/^the file is empty \(0 bytes\): a capture or copy that never wrote anything; capture or copy it again$/);
    }
  });

  it('refuses what is not RIFF/WAVE', async () => {
    const path = join(tempDir(), 'not.wav');
    writeFileSync(path, 'time,a\n0,1\n');
    await expect(readAll(path)).rejects.toThrow(/not a RIFF\/WAVE file/);
  });
});

describe('bytes after the data chunk', () => {
  // pcm16-2ch.wav (Python's wave module): RIFF header, fmt, then data to the end of the file.
  const original = readFileSync(fixture('wav', 'pcm16-2ch.wav'));
  const dataAt = original.indexOf('data', 12, 'latin1');
  const dataSize = original.readUInt32LE(dataAt + 4);
  const chunk = (id: string, body: Buffer) => { const h = Buffer.alloc(8); h.write(id, 0, 'latin1'); h.writeUInt32LE(body.length, 4); return Buffer.concat([h, body, Buffer.alloc(body.length % 2)]); };
  /** The fixture with the data chunk claiming `claimed` bytes and `tail` after the whole original data. */
  const withTail = (claimed: number, tail: Buffer) => {
    const b = Buffer.concat([original, tail]);
    b.writeUInt32LE(claimed, dataAt + 4);
    b.writeUInt32LE(b.length - 8, 4);
    return b;
  };
  const notesOf = async (bytes: Buffer) => {
    const path = join(tempDir(), 'x.wav');
    writeFileSync(path, bytes);
    const { rec, channels } = await readAll(path);
    return { notes: rec.notes, frames: channels[0].length };
  };

  it('notes how many bytes a short data chunk size leaves unread, and reads only the declared frames', async () => {
    const { notes, frames } = await notesOf(withTail(dataSize - 400, Buffer.alloc(0)));
    expect(frames).toBe((dataSize - 400) / 4);
    expect(notes).toEqual([`400 bytes after the data chunk's end (byte ${dataAt + 8 + dataSize - 400}) form no chunk and were ignored; if the recorder wrote more samples than the data chunk's size says, the header is wrong: check the recorder or re-export the file`]);
  });

  it('notes nothing for chunks, an ID3v2 tag or an ID3v1 tag after the data, as writers leave them', async () => {
    // LIST/INFO (RIFF, Microsoft 1991) and an "id3 " chunk, then a raw ID3v2.3 header with a 20-byte body and ID3v1's 128 bytes from "TAG" (from memory).
    const info = chunk('LIST', Buffer.concat([Buffer.from('INFOISFT', 'latin1'), Buffer.from([5, 0, 0, 0]), Buffer.from('test\0\0', 'latin1')]));
    const id3Chunk = chunk('id3 ', Buffer.from('ID3\x03\x00\x00\x00\x00\x00\x00', 'latin1'));
    const id3v2 = Buffer.concat([Buffer.from('ID3\x03\x00\x00\x00\x00\x00\x14', 'latin1'), Buffer.alloc(20)]);
    const id3v1 = Buffer.concat([Buffer.from('TAG', 'latin1'), Buffer.alloc(125)]);
    expect((await notesOf(withTail(dataSize, Buffer.concat([info, id3Chunk, id3v2, id3v1])))).notes).toEqual([]);
    // struct-chunks.wav (Python's struct) carries a LIST chunk after its data.
    expect((await readAll(fixture('wav', 'struct-chunks.wav'))).rec.notes).toEqual([]);
    // Counted past the known chunks: 6 bytes of junk after a LIST chunk.
    expect((await notesOf(withTail(dataSize, Buffer.concat([info, Buffer.from('\x00\x01\x02\x03\x04\x05', 'latin1')])))).notes[0]).toMatch(/^6 bytes after the data chunk's end/);
  });

  it('keeps the note in run.json with the recording, which still reduces', () => {
    const root = join(tempDir(), 'archive');
    mkdirSync(join(root, 'rec'), { recursive: true });
    writeFileSync(join(root, 'archive.yaml'), 'groups:\n  - name: g\n    match: "rec/*.wav"\n');
    writeFileSync(join(root, 'rec', 'short-size.wav'), withTail(dataSize - 400, Buffer.alloc(0)));
    const r = quern('reduce', root, '--out', join(root, '..', 'out'), '--quiet');
    expect(r.code, r.stdout + r.stderr).toBe(0);
    const line = readJson(join(root, '..', 'out', 'run.json')).recordings.find((x: { recording: string }) => x.recording === 'rec/short-size.wav');
    expect(line.status).toBe('reduced');
    expect(line.messages).toContain(`400 bytes after the data chunk's end (byte ${dataAt + 8 + dataSize - 400}) form no chunk and were ignored; if the recorder wrote more samples than the data chunk's size says, the header is wrong: check the recorder or re-export the file`);
  });
});
