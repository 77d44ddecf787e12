// CSV files as loggers write them: times printed to a fixed resolution near or coarser than their step, a last line cut
// mid-number, NUL padding, a header alone. Files, rates and numpy's figures: test/fixtures/make-printed-time-fixtures.py.
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { printedRate, stepCounter } from '../stages/read/time-steps.js';
import { fixture, readAll, readJson } from './helpers.js';

interface Made { file: string; rate?: number; frames?: number; rows_lost?: number; mean?: number; rms?: number; min?: number; max?: number; start?: string; coarse?: boolean; off_line?: number; late_line?: number; cut_line?: number; cut_text?: string; padding?: number; nul_at?: number; nul_line?: number }
const made = readJson<{ files: Made[] }>(fixture('printed-time', 'expected.json')).files;
const file = (name: string) => made.find((f) => f.file === name)!;
const read = (name: string, sampleRate: number | null = null) => readAll(fixture('printed-time', name), sampleRate == null ? {} : { sampleRate });

/** numpy's mean, RMS, min and max of the finite samples (np.mean, sqrt(mean(x²)), min, max). */
function figures(x: number[]) {
  const kept = x.filter(Number.isFinite);
  const mean = kept.reduce((a, b) => a + b, 0) / kept.length;
  return { mean, rms: Math.sqrt(kept.reduce((a, b) => a + b * b, 0) / kept.length), min: Math.min(...kept), max: Math.max(...kept) };
}
const expectFigures = (x: number[], f: Made) => {
  const got = figures(x);
  expect(got.mean).toBeCloseTo(f.mean!, 9);
  expect(got.rms).toBeCloseTo(f.rms!, 9);
  expect([got.min, got.max]).toEqual([f.min, f.max]);
};

describe('a time column printed to a resolution near its step', () => {
  const near = made.filter((f) => f.rate != null && !f.coarse && f.padding == null && f.cut_line == null);

  it.each(near.map((f) => [f.file, f] as [string, Made]))('%s reads the rate it was made with, every row, and numpy\'s figures', async (_n, f) => {
    const { rec, channels } = await read(f.file);
    expect(rec.sampleRate).toBe(f.rate);
    expect(channels[0].length).toBe(f.frames);
    expect(channels[0].filter(Number.isNaN).length).toBe(f.rows_lost);
    expect(rec.timeSteps?.irregular).toBe(0);
    expect(rec.startTime?.toISOString() ?? null).toBe(f.start ?? null);
    expectFigures(channels[0], f);
    // The right declaration agrees.
    expect((await read(f.file, f.rate!)).rec.sampleRate).toBe(f.rate);
  });

  it('counts the whole units of the print exactly: 800 Hz to the millisecond steps by 1 and 2 ms, a quarter of them 2', () => {
    const units = Array.from({ length: 4096 }, (_, i) => Math.round(i * 1.25 + 1e-9));
    const r = printedRate(units, 1e-3);
    expect([r.rate, r.coarse]).toEqual([800, false]);
    // One row lost among steps of one unit (1 kHz to the millisecond) stays a row lost, not a step of the rate.
    const ms = Array.from({ length: 4096 }, (_, i) => (i < 1000 ? i : i + 1));
    expect(printedRate(ms, 1e-3).rate).toBe(1000);
    // 995 Hz to the millisecond steps two units every 199 rows or so, evenly (Python's round of i / 995 s): a steady clock.
    const slow = Array.from({ length: 4096 }, (_, i) => Math.round((i * 1000) / 995));
    expect(printedRate(slow, 1e-3).rate).toBe(995);
    // Rows lost at uneven places among 1 kHz rows (after rows 700, 1500 and 3100) stay rows lost.
    const uneven = Array.from({ length: 4096 }, (_, i) => i + (i > 700 ? 1 : 0) + (i > 1500 ? 1 : 0) + (i > 3100 ? 1 : 0));
    expect(printedRate(uneven, 1e-3).rate).toBe(1000);
  });
});

describe('a time column printed coarser than its step (rows share a printed time)', () => {
  const coarse = made.filter((f) => f.coarse && f.off_line == null && f.late_line == null);

  it.each(coarse.map((f) => [f.file, f] as [string, Made]))('%s is refused without a declared rate, naming the line of the first repeat', async (_n, f) => {
    await expect(read(f.file)).rejects.toThrow(/^line 3: the time .* repeats the line before: printed to 3 decimals, the time column cannot tell its samples apart/);
  });

  it.each(coarse.map((f) => [f.file, f] as [string, Made]))('%s is held to a declared rate on its printed grid, read whole with a note', async (_n, f) => {
    const { rec, channels } = await read(f.file, f.rate!);
    expect(rec.sampleRate).toBe(f.rate);
    expect(channels[0].length).toBe(f.frames);
    expect(rec.timeSteps?.irregular).toBe(0);
    expect(rec.notes).toEqual([expect.stringMatching(new RegExp(`^the time column is printed to 3 decimals, coarser than its step at the declared ${f.rate} Hz`))]);
    expectFigures(channels[0], f);
    await expect(read(f.file, f.rate! * 1.01)).rejects.toThrow(/lies more than half a printed unit \(3 decimals\) from where a row at the declared/);
  });

  it('rows lost past the first 4,096 leave the grid as the rows stream: a note naming the line after the gap, an irregular step', async () => {
    const f = file('2000hz-posix-ms-lost-late.csv');
    const { rec, channels } = await read(f.file, f.rate!);
    expect(channels[0].length).toBe(f.frames! - f.rows_lost!);
    expect(rec.timeSteps?.irregular).toBe(1);
    expect(rec.notes).toHaveLength(3);
    expect(rec.notes[1]).toMatch(/^time steps irregular: 1 of /);
    const m = rec.notes[2].match(/^rows lost: the time column leaves the grid of the declared 2000 Hz once, first at line (\d+) \(/);
    // Three rows at 0.5 ms a row move the rows after the gap by 1.5 printed units: seen within two units' rows (4) of the gap.
    expect(Number(m?.[1])).toBeGreaterThanOrEqual(f.late_line!);
    expect(Number(m?.[1])).toBeLessThanOrEqual(f.late_line! + 4);
  });

  it('rows lost among the first rows leave the declared grid, at the line after the gap', async () => {
    const f = file('2000hz-posix-ms-lost.csv');
    await expect(read(f.file, f.rate!)).rejects.toThrow(new RegExp(`^line ${f.off_line}: the time .* lies more than half a printed unit`));
  });
});

describe('the end of a file as a logger leaves it', () => {
  it('a last line cut mid-number without a line end is left out, with a note quoting it', async () => {
    const f = file('cut-number.csv');
    const { rec, channels } = await read(f.file);
    const before = readFileSync(fixture('printed-time', f.file), 'utf8').split('\n').at(-2)!.split(',')[1];
    expect(channels[0].length).toBe(f.frames);
    expectFigures(channels[0], f);
    expect(rec.notes).toEqual([`line ${f.cut_line}, the last ("${f.cut_text}"), has no line end and shows a cut (a copy or capture stopped part-way): its "p_abs" value "10" is printed shorter than the line before's "${before}"; it is left out of the figures: if it is whole, end the file with a line end`]);
  });

  it('a last line with fewer fields than the header, unended, is left out the same way', async () => {
    const f = file('partial-last-line.csv');
    const { rec, channels } = await read(f.file);
    expect(channels[0].length).toBe(f.frames);
    expectFigures(channels[0], f);
    expect(rec.notes).toEqual([expect.stringMatching(new RegExp(`^line ${f.cut_line}, the last \\("2\\.000000,0\\.12"\\), has no line end and shows a cut .*it holds 2 of the header's 3 fields`))]);
  });

  it('trailing NUL bytes are padding, left out with a note of how many', async () => {
    const f = file('nul-padded.csv');
    const { rec, channels } = await read(f.file);
    expect(channels[0].length).toBe(f.frames);
    expect(channels[0].filter(Number.isNaN).length).toBe(0);
    expectFigures(channels[0], f);
    expect(rec.notes).toEqual([`the file ends in ${f.padding} NUL bytes, padding a logger writes ahead of its data (a file sized before it was written); left out`]);
  });

  it('a NUL within the text is damage, refused with its byte offset and line', async () => {
    const f = file('nul-inside.csv');
    await expect(read(f.file)).rejects.toThrow(`byte ${f.nul_at} (line ${f.nul_line}): a NUL byte within the text`);
  });

  it('a header alone says the file holds no samples', async () => {
    await expect(read('header-only.csv')).rejects.toThrow(/^line 1: the file holds no samples: its header and no rows after it/);
  });
});

describe('a time that is no number among a time vector\'s times', () => {
  it('is an irregular step without a width: no NaN in what is said', () => {
    const steps = stepCounter(0.001, 1e-5);
    for (const t of [0, 0.001, NaN, 0.003, 0.004]) steps.add(t);
    expect(steps.result()).toMatchObject({ irregular: 1, unmeasured: 1, widest_s: 0 });
  });
});
