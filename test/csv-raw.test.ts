// Text and raw binary readers: delimiters, decimal commas, time columns, declared layouts.
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { fixture, readAll, readJson, tempDir } from './helpers.js';

const write = (name: string, text: string) => {
  const path = join(tempDir(), name);
  writeFileSync(path, text);
  return path;
};

describe('CSV reader (RFC 4180 quoting; delimiters as spreadsheets in many locales write them)', () => {
  it('derives the sample rate from the time column and reads comma-separated values', async () => {
    const rows = Array.from({ length: 1000 }, (_, i) => `${(i / 2560).toFixed(7)},${i},${-i / 2}`);
    const { rec, channels } = await readAll(write('a.csv', ['time,"a, quoted",b', ...rows].join('\n')));
    expect(rec.sampleRate).toBeCloseTo(2560, 1);
    expect(rec.channelNames).toEqual(['a, quoted', 'b']);
    expect(channels[0].slice(0, 3)).toEqual([0, 1, 2]);
    expect(channels[1][999]).toBe(-499.5);
    expect(rec.notes).toEqual([]);
  });

  it('reads semicolons with decimal commas, CRLF line ends, comment lines and a byte-order mark', async () => {
    const text = '\uFEFF# logger export\r\ntime;x\r\n0,000;1,5\r\n0,001;-2,25\r\n0,002;3\r\n';
    const { rec, channels } = await readAll(write('b.csv', text));
    expect(rec.sampleRate).toBe(1000);
    expect(channels[0]).toEqual([1.5, -2.25, 3]);
  });

  it('reads tabs, takes a declared sample rate when there is no time column, and counts empty cells as missing', async () => {
    const { rec, channels } = await readAll(write('c.tsv', 'p\tq\n1\t2\n\t4\n5\t6\n'), { sampleRate: 50 });
    expect(rec.sampleRate).toBe(50);
    expect(channels[0][1]).toBeNaN();
    expect(channels[1]).toEqual([2, 4, 6]);
  });

  it('reports irregular time steps (a gap) without failing', async () => {
    const times = [0, 0.01, 0.02, 0.03, 0.08, 0.09, 0.1];
    const { rec } = await readAll(write('d.csv', ['t,x', ...times.map((t) => `${t},1`)].join('\n')));
    expect(rec.notes.join()).toMatch(/1 of 6 steps differ/);
    expect(rec.notes.join()).toMatch(/widest is 50\.00 ms/);
  });

  it('refuses a file with neither a time column nor a declared rate, saying what to add', async () => {
    await expect(readAll(write('e.csv', 'x,y\n1,2\n'))).rejects.toThrow(/add sample_rate to the group/);
  });

  it('refuses a time column that disagrees with the declared rate', async () => {
    await expect(readAll(write('f.csv', 'time,x\n0,1\n0.001,2\n0.002,3\n'), { sampleRate: 500 })).rejects.toThrow(/1000\.00 Hz but the declaration says 500 Hz/);
  });
});

describe('raw binary reader against files written by numpy', () => {
  const expected = readJson(fixture('raw', 'expected.json'));

  it('big-endian int16, three channels, 16-byte header, normalised to full scale', async () => {
    const { rec, channels } = await readAll(fixture('raw', 'be-int16-3ch.bin'), { sampleRate: 100, layout: { sample_type: 'int16', byte_order: 'big', channels: 3, header_bytes: 16 } });
    expect(rec.frames).toBe(5);
    expect(channels).toEqual(expected['be-int16-3ch.bin']);
  });

  it('little-endian float32, two channels, no header', async () => {
    const { channels } = await readAll(fixture('raw', 'le-float32-2ch.bin'), { sampleRate: 100, layout: { sample_type: 'float32', byte_order: 'little', channels: 2, header_bytes: 0 } });
    expect(channels).toEqual(expected['le-float32-2ch.bin']);
  });

  it('notes trailing bytes that do not make a whole frame', async () => {
    const { rec } = await readAll(fixture('raw', 'be-int16-3ch.bin'), { sampleRate: 100, layout: { sample_type: 'int16', byte_order: 'big', channels: 3, header_bytes: 14 } });
    expect(rec.notes.join()).toMatch(/do not make a whole frame/);
  });
});
