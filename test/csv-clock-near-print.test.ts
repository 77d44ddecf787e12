// A CSV time column printed to about its own step (to the millisecond at about 1 kHz): a clock a fraction of a printed unit
// off it against rows lost. Files made here from invented loggers; the reference is the closed form the rows were written
// from: row k of a clock at fs Hz is printed as k / fs seconds rounded to the millisecond, and each row left out is one lost.
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { printedRate } from '../stages/read/time-steps.js';
import { readAll, tempDir } from './helpers.js';

/** The printed units of row k of a clock at `fs` Hz to the millisecond: round(1000 k / fs), halves away from zero. */
const msOf = (k: number, fs: number) => Math.round((1000 * k) / fs);

/** A CSV of `rows` rows of a clock at `fs` Hz, times to the millisecond, the rows in `lost` left out; a made-up pressure trace. */
function writeClock(fs: number, rows: number, lost: number[] = []): string {
  const out = ['time,p_rel'];
  for (let k = 0; k < rows; k++) if (!lost.includes(k)) out.push(`${(msOf(k, fs) / 1000).toFixed(3)},${(0.25 * Math.sin(0.37 * k) + 1e-4 * (k % 7)).toFixed(6)}`);
  const path = join(tempDir(), `clock-${fs}-${lost.length}.csv`);
  writeFileSync(path, out.join('\n') + '\n');
  return path;
}

describe('a time column printed to about its step', () => {
  it('999.9 Hz to the millisecond, one more unit every 10,000 rows: its own rate, every row, no row lost', async () => {
    const { rec, channels } = await readAll(writeClock(999.9, 30000));
    expect(rec.sampleRate).toBe(999.9);
    expect(channels[0].length).toBe(30000);
    expect(channels[0].filter(Number.isNaN).length).toBe(0);
    expect(rec.timeSteps?.irregular).toBe(0);
    expect(rec.notes).toEqual([]);
  });

  it('499.95 Hz to the millisecond (two units a step, three every 5,000 rows): its own rate, no row lost', async () => {
    const { rec, channels } = await readAll(writeClock(499.95, 30000));
    expect(rec.sampleRate).toBe(499.95);
    expect(channels[0].filter(Number.isNaN).length).toBe(0);
    expect(rec.notes).toEqual([]);
  });

  it('995 Hz with one row lost among its first 4,096 rows: 995 Hz, and that row read as one missing sample in its place', async () => {
    const { rec, channels } = await readAll(writeClock(995, 12000, [1000]));
    expect(rec.sampleRate).toBe(995);
    expect(channels[0].length).toBe(12000);
    expect(channels[0].flatMap((v, i) => (Number.isNaN(v) ? [i] : []))).toEqual([1000]);
    expect(rec.timeSteps?.irregular).toBe(0);
    expect(rec.notes).toEqual([expect.stringMatching(/^rows lost: the time column skips 1 rows at its nominal step of 1\.005 ms in 1 gap/)]);
  });

  it('the rate from the first 4,096 rows alone: 995 Hz with a row lost, and with two rows lost far apart', () => {
    const head = (lost: number[]) => Array.from({ length: 4096 + lost.length }, (_, k) => k).filter((k) => !lost.includes(k)).map((k) => msOf(k, 995));
    expect(printedRate(head([1000]), 1e-3).rate).toBe(995);
    expect(printedRate(head([700, 3000]), 1e-3).rate).toBe(995);
  });

  it('a clock at 1 kHz with one row lost still reads 1 kHz with one row lost', async () => {
    const { rec, channels } = await readAll(writeClock(1000, 20000, [1000]));
    expect(rec.sampleRate).toBe(1000);
    expect(channels[0].length).toBe(20000);
    expect(channels[0].flatMap((v, i) => (Number.isNaN(v) ? [i] : []))).toEqual([1000]);
    expect(rec.notes).toEqual(['rows lost: the time column skips 1 rows at its nominal step of 1.000 ms in 1 gap, read as missing samples; the largest, 1 rows (0.001000 s), lies between 0.999 (line 1001) and 1.001 (line 1002)']);
  });

  it('a clock at 1 kHz with a row lost past the first 4,096 rows, and one with none', async () => {
    const late = await readAll(writeClock(1000, 20000, [15000]));
    expect([late.rec.sampleRate, late.channels[0].length, late.channels[0].filter(Number.isNaN).length]).toEqual([1000, 20000, 1]);
    const exact = await readAll(writeClock(1000, 20000));
    expect([exact.rec.sampleRate, exact.channels[0].length, exact.channels[0].filter(Number.isNaN).length]).toEqual([1000, 20000, 0]);
    expect(exact.rec.notes).toEqual([]);
    expect(exact.rec.timeSteps?.irregular).toBe(0);
  });
});
