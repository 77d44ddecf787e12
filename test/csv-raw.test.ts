// Text and raw binary readers: delimiters, decimal commas, time columns, declared layouts.
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { fixture, quern, readAll, readJson, tempDir } from './helpers.js';
import { CLOCK_DIGITS } from '../stages/read/time-steps.js';

const write = (name: string, text: string | Buffer) => {
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

  it('reports irregular time steps (a step of no whole number of steps) without failing', async () => {
    const times = ['0.000', '0.010', '0.020', '0.030', '0.055', '0.065', '0.075'];
    const { rec, channels } = await readAll(write('d.csv', ['t,x', ...times.map((t) => `${t},1`)].join('\n')));
    expect(rec.notes.join()).toMatch(/1 of 6 steps differ/);
    expect(rec.notes.join()).toMatch(/widest is 25\.00 ms/);
    expect(channels[0]).toEqual([1, 1, 1, 1, 1, 1, 1]);
  });

  it('takes the rate from the steps near their median, so that a dropout among the first rows does not pull it', async () => {
    // 1 kHz, with half a second lost after row 300 (the logger's buffer overran): the rate stays 1 kHz, the gap is counted.
    const times = Array.from({ length: 1000 }, (_, i) => (i < 300 ? i : i + 500) / 1000);
    const { rec, channels } = await readAll(write('gap.csv', ['time,x', ...times.map((t) => `${t.toFixed(3)},1`)].join('\n')));
    expect(rec.sampleRate).toBe(1000);
    // A step of 501 nominal steps: 500 rows lost, read as missing samples in their places.
    expect(rec.timeSteps?.irregular).toBe(0);
    expect(channels[0].length).toBe(1500);
    expect(channels[0].filter(Number.isNaN).length).toBe(500);
    expect(rec.notes).toEqual(['rows lost: the time column skips 500 rows at its nominal step of 1.000 ms in 1 gap, read as missing samples; the largest, 500 rows (0.5000 s), lies between 0.299 (line 301) and 0.800 (line 302)']);
  });

  it('refuses a file with neither a time column nor a declared rate, saying what to add', async () => {
    await expect(readAll(write('e.csv', 'x,y\n1,2\n'))).rejects.toThrow(/set sample_rate for the group in archive\.yaml/);
  });

  // ISO 8601-1:2019 date and time representations; a zone-less time is read as UTC, as quern reads every start time.
  it('reads ISO 8601 date-times in the time column: the start from the first row, UTC unless a zone is given', async () => {
    const rows = (first: string, zone: string) => Array.from({ length: 200 }, (_, i) => `${first}${(i * 0.004).toFixed(3).padStart(6, '0')}${zone},${i}`);
    // The machine's own zone set far from UTC: a zone-less time must not move with it (Node applies TZ as it is set).
    const machineZone = process.env.TZ;
    process.env.TZ = 'America/Anchorage';
    try {
      expect(new Date(2026, 10, 16).getTimezoneOffset()).toBe(540);
      for (const [zone, start] of [['', '2026-11-16T02:00:00.000Z'], ['Z', '2026-11-16T02:00:00.000Z'], ['+01:00', '2026-11-16T01:00:00.000Z']]) {
        const { rec, channels } = await readAll(write(`iso${zone.length}.csv`, ['timestamp,x', ...rows('2026-11-16 02:00:', zone)].join('\n')));
        expect(rec.startTime?.toISOString()).toBe(start);
        expect(rec.sampleRate).toBe(250);
        expect(rec.notes).toEqual([]);
        expect(channels[0][199]).toBe(199);
      }
    } finally {
      if (machineZone === undefined) delete process.env.TZ; else process.env.TZ = machineZone;
    }
  });

  it('keeps ISO 8601 times finer than a millisecond: a 25.6 kHz logger stamping each row to 100 ns, with and without a zone', async () => {
    // 1 / 25600 s = 39.0625 µs; each row's stamp rounded to 7 decimals of a second, as the logger prints it.
    for (const zone of ['', 'Z']) {
      const rows = Array.from({ length: 5000 }, (_, i) => `2026-11-16T02:00:${(i / 25600).toFixed(7).padStart(10, '0')}${zone},${i % 7}`);
      const { rec, channels } = await readAll(write('fast.csv', ['time,x', ...rows].join('\n')));
      expect(rec.sampleRate).toBe(25600);
      expect(rec.notes).toEqual([]);
      expect(rec.timeSteps?.irregular).toBe(0);
      expect(channels[0][4999]).toBe(4999 % 7);
    }
  });

  it('takes POSIX seconds in a time column (a logger\'s clock) as the start, and seconds from the capture\'s start as none', async () => {
    const rows = (first: number) => Array.from({ length: 100 }, (_, i) => `${(first + i / 100).toFixed(2)},${i}`);
    const posix = await readAll(write('posix.csv', ['time,x', ...rows(1794794400)].join('\n')));
    expect([posix.rec.startTime?.toISOString(), posix.rec.sampleRate]).toEqual(['2026-11-16T02:00:00.000Z', 100]);
    const relative = await readAll(write('relative.csv', ['time,x', ...rows(3600)].join('\n')));
    expect([relative.rec.startTime, relative.rec.sampleRate]).toEqual([null, 100]);
  });

  it('refuses a time column of milliseconds since 1970, which read as seconds would give a rate a thousand times too low', async () => {
    const text = ['timestamp,x', ...[0, 1, 2, 3].map((i) => `${1794794400000 + i},${i}`)].join('\n');
    await expect(readAll(write('ms.csv', text))).rejects.toThrow(/line 2: column "timestamp" starts at 1794794400000, too large for seconds; quern reads a time column in seconds \(or as ISO 8601 date-times\)/);
  });

  it('refuses a time column of dates that are not ISO 8601, rather than guess at their order of day and month', async () => {
    for (const cell of ['05/11/2026 02:00:00', 'night 3']) {
      const text = ['time,x', ...[0, 1, 2].map((i) => `${cell.replace('00:00', `00:0${i}`)},${i}`)].join('\n');
      await expect(readAll(write('us.csv', text))).rejects.toThrow(/column "time" looks like a time column but its first rows are neither numbers \(seconds\) nor ISO 8601 date-times/);
    }
  });

  it('refuses a time column that disagrees with the declared rate', async () => {
    await expect(readAll(write('f.csv', 'time,x\n0,1\n0.001,2\n0.002,3\n'), { sampleRate: 500 })).rejects.toThrow(/1000\.00 Hz but the declaration says 500 Hz/);
  });
});

describe('CSV time columns printed by Python and numpy (test/fixtures/make-csv-fixtures.py)', () => {
  // Times i / fs printed to fixed decimals by Python's format and numpy.savetxt, as scripts and loggers export them; the rate,
  // frames and start are those each file was made with (test/fixtures/csv/expected.json).
  interface Made { file: string; rate: number; frames: number; duration_s: number; start: string | null; refused_at_line?: number }
  const expected = readJson<{ files: Made[] }>(fixture('csv', 'expected.json'));
  const made = expected.files.filter((f) => f.refused_at_line === undefined);

  it.each(made.map((f) => [f.file, f] as [string, Made]))('%s reads its exact rate, all its frames and no irregular step', async (_name, f) => {
    const { rec, channels } = await readAll(fixture('csv', f.file));
    // 51200 / 3 Hz has no finite decimal: its times, every digit of a double, give it to the part in 10^9 a rate is quoted to.
    if (Number.isInteger(f.rate)) expect(rec.sampleRate).toBe(f.rate);
    else expect(Math.abs(rec.sampleRate / f.rate - 1)).toBeLessThanOrEqual(CLOCK_DIGITS);
    expect(channels[0].length).toBe(f.frames);
    expect(Math.abs(channels[0].length / rec.sampleRate / f.duration_s - 1)).toBeLessThanOrEqual(CLOCK_DIGITS);
    expect(rec.channelNames).toEqual(['x']);
    expect(channels[0].slice(0, 8)).toEqual([0, 1, 2, 3, 4, 5, 6, 0]);
    expect(rec.timeSteps?.irregular).toBe(0);
    expect(rec.notes).toEqual([]);
    expect(rec.startTime?.toISOString() ?? null).toBe(f.start);
  });

  it('holds a correct declaration as agreeing with such a column (300 Hz printed to the millisecond)', async () => {
    const { rec } = await readAll(fixture('csv', '300hz-3dp.csv'), { sampleRate: 300 });
    expect(rec.sampleRate).toBe(300);
    await expect(readAll(fixture('csv', '300hz-3dp.csv'), { sampleRate: 305 })).rejects.toThrow(/the time column steps at 300\.000 Hz but the declaration says 305 Hz/);
  });

  it('refuses a column printed too coarsely to tell its samples apart (2 kHz to the millisecond), naming the line and what to do', async () => {
    const f = expected.files.find((x) => x.file === '2000hz-3dp.csv')!;
    await expect(readAll(fixture('csv', f.file))).rejects.toThrow(new RegExp(`^line ${f.refused_at_line}: the time 0\\.001 repeats the line before: printed to 3 decimals, the time column cannot tell its samples apart \\(about 0\\.500 ms\\); export the times with more decimals, or remove the time column and set sample_rate`));
  });
});

describe('CSV cells and headers that are not what they seem', () => {
  it('ignores an unnamed last column of empty cells (a delimiter ending every line), and notes values that turn up there later', async () => {
    const rows = Array.from({ length: 50 }, (_, i) => `${i / 100},${i},${-i},`);
    const { rec, channels } = await readAll(write('trail.csv', ['time,a,b,', ...rows].join('\n')));
    expect(rec.channelNames).toEqual(['a', 'b']);
    expect(channels[1][49]).toBe(-49);
    expect(rec.notes).toEqual([]);
    // Past the 4,096 rows the reader looks at first.
    const long = Array.from({ length: 5000 }, (_, i) => `${(i / 1000).toFixed(3)},${i},${i === 4500 ? 7 : ''}`);
    const late = await readAll(write('late.csv', ['time,a,', ...long].join('\n')));
    expect(late.rec.channelNames).toEqual(['a']);
    expect(late.channels[0][4999]).toBe(4999);
    expect(late.rec.notes).toEqual(['1 rows hold values in the unnamed last column, empty in the first rows and so not read (first at line 4502); name the column in the header to read it']);
  });

  it('refuses a header that names a column twice, naming the line, the name and the columns', async () => {
    await expect(readAll(write('dup.csv', '# rig 3\ntime,acc,acc\n0,1,2\n0.01,1,2\n'))).rejects.toThrow('line 2: the header names "acc" twice (columns 2 and 3); give each column its own name');
  });

  it('refuses a header with an unnamed column, such as the row index a dataframe writes first, naming the column and the cause', async () => {
    // pandas' DataFrame.to_csv() writes its row index as a first column under an empty name unless index=False (common practice; layout from memory).
    const indexed = ',time,acc\n0,0.0,1.5\n1,0.01,-2.0\n2,0.02,0.5\n';
    await expect(readAll(write('indexed.csv', indexed))).rejects.toThrow('line 1: column 1 has no name in the header; an unnamed first column is usually the row index a spreadsheet or dataframe wrote (pandas: to_csv(..., index=False) leaves it out); write the file without that column, or name it in the header');
    await expect(readAll(write('gap.csv', 'time,a,,b\n0,1,2,3\n0.01,1,2,3\n'))).rejects.toThrow('line 1: column 3 has no name in the header; write the file without that column, or name it in the header');
    // A reduction fails the recording, naming it, and goes on.
    const dir = join(tempDir(), 'arc');
    mkdirSync(dir);
    writeFileSync(join(dir, 'archive.yaml'), 'groups:\n  - { name: g, match: "*.csv" }\n');
    writeFileSync(join(dir, 'indexed.csv'), indexed);
    writeFileSync(join(dir, 'plain.csv'), 'time,acc\n0.0,1.5\n0.01,-2.0\n0.02,0.5\n');
    const r = quern('reduce', dir, '--out', join(dir, '..', 'out'), '--jobs', '1');
    expect(r.code, r.stderr).toBe(1);
    expect(r.stdout).toMatch(/FAILED  indexed\.csv: line 1: column 1 has no name in the header/);
    expect(r.stdout).toMatch(/1 of 2 recordings reduced/);
  });

  it('notes cells that are not numbers (first line, column and count), which count as missing samples; NaN and empty cells are missing samples by intent', async () => {
    const rows = Array.from({ length: 20 }, (_, i) => `${i / 100},${i === 5 ? 'ERR' : i === 6 ? 'NaN' : i},${i === 9 || i === 12 ? 'over' : i === 3 ? '' : i}`);
    const { rec, channels } = await readAll(write('err.csv', ['time,a,b', ...rows].join('\n')));
    expect(channels[0][5]).toBeNaN();
    expect(channels[1][3]).toBeNaN();
    expect(rec.notes).toEqual(['3 cells are not numbers (first at line 7, column "a": "ERR"); they count as missing samples']);
  });

  it('refuses a time that is neither seconds nor a date-time, naming its line and value, in the first rows or after them', async () => {
    await expect(readAll(write('t1.csv', 'time,a\n0,1\n0.001,2\n1.2.3,3\n0.003,4\n'))).rejects.toThrow('line 4: the time "1.2.3" is neither a number (seconds) nor an ISO 8601 date-time; correct that line or remove it');
    const rows = Array.from({ length: 5000 }, (_, i) => `${i === 4500 ? '1.2.3' : (i / 1000).toFixed(3)},${i}`);
    await expect(readAll(write('t2.csv', ['time,a', ...rows].join('\n')))).rejects.toThrow('line 4502: the time "1.2.3" is neither a number (seconds) nor an ISO 8601 date-time');
  });

  it('reads lines ending in CR alone', async () => {
    const { rec, channels } = await readAll(write('cr.csv', '# old logger\rtime,x\r0.000,1\r0.010,2\r0.020,3\r'));
    expect(rec.sampleRate).toBe(100);
    expect(channels[0]).toEqual([1, 2, 3]);
  });
});

describe('CSV files saved in an encoding other than UTF-8', () => {
  // Byte-order marks as the Unicode Standard gives them (FF FE for UTF-16LE, FE FF for UTF-16BE, FF FE 00 00 for UTF-32LE; from memory);
  // Node's own 'utf16le' encoder writes the text, swapped pairwise for big-endian.
  const text = 'time,a\n0,1\n0.001,2\n0.002,3\n';
  const le = Buffer.from(text, 'utf16le');
  const files: [string, Buffer, RegExp][] = [
    ['le.csv', Buffer.concat([Buffer.from([0xff, 0xfe]), le]), /UTF-16 \(little-endian\) byte-order mark/],
    ['be.csv', Buffer.concat([Buffer.from([0xfe, 0xff]), Buffer.from(le).swap16()]), /UTF-16 \(big-endian\) byte-order mark/],
    ['bare.csv', le, /NUL bytes in its first line/],
    ['wide.csv', Buffer.concat([Buffer.from([0xff, 0xfe, 0, 0]), ...[...text].map((c) => Buffer.from([c.charCodeAt(0), 0, 0, 0]))]), /UTF-32 \(little-endian\)/],
  ];

  it('fails each such recording, saying what gave the encoding away and to save it as UTF-8, while a UTF-8 one reduces', () => {
    const root = join(tempDir(), 'archive');
    mkdirSync(join(root, 'h'), { recursive: true });
    writeFileSync(join(root, 'archive.yaml'), 'groups:\n  - name: h\n    match: "h/*.csv"\n');
    writeFileSync(join(root, 'h', 'plain.csv'), text);
    for (const [name, bytes] of files) writeFileSync(join(root, 'h', name), bytes);
    const r = quern('reduce', root, '--out', join(root, '..', 'out'), '--log', 'plain');
    expect(r.code, r.stdout + r.stderr).toBe(1);
    const run = readJson(join(root, '..', 'out', 'run.json'));
    const reasons = Object.fromEntries(run.recordings.filter((f: { status: string }) => f.status === 'failed').map((f: { recording: string; reason: string }) => [f.recording, f.reason]));
    for (const [name, , found] of files) {
      expect(reasons[`h/${name}`]).toMatch(found);
      expect(reasons[`h/${name}`]).toContain('line 1: the file is not UTF-8 text');
      expect(reasons[`h/${name}`]).toContain('save it as UTF-8');
    }
    expect(r.stdout + r.stderr).not.toContain('\uFFFD');
    expect(reasons['h/plain.csv']).toBeUndefined();
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

  it('a declared duration_s catches a wrong channel count or sample type, which read as plausible channels: the recording fails', () => {
    // numpy wrote 5 frames of 3 int16 channels after 16 bytes: 30 bytes of samples, 0.05 s at 100 Hz.
    const reduce = (layout: string) => {
      const dir = join(tempDir(), 'arc');
      mkdirSync(dir);
      writeFileSync(join(dir, 'rig.bin'), readFileSync(fixture('raw', 'be-int16-3ch.bin')));
      writeFileSync(join(dir, 'archive.yaml'), `groups:\n  - { name: r, match: "*.bin", sample_rate: 100, duration_s: 0.05, layout: { ${layout}, byte_order: big, header_bytes: 16 } }\n`);
      const out = join(dir, '..', 'out');
      return { r: quern('reduce', dir, '--out', out, '--jobs', '1'), out };
    };
    const right = reduce('sample_type: int16, channels: 3');
    expect(right.r.code, right.r.stderr).toBe(0);
    expect(readJson(join(right.out, 'quality.json')).recordings[0].channels.map((c: any) => c.flags.find((f: any) => f.name === 'declaration').severity)).toEqual(['ok', 'ok', 'ok']);
    // Two channels make 7 frames of the 30 bytes (0.07 s); int32 in three channels, 2 frames (0.02 s).
    for (const [wrong, read] of [['sample_type: int16, channels: 2', '0.070'], ['sample_type: int32, channels: 3', '0.020']]) {
      const { r, out } = reduce(wrong);
      expect(r.code).toBe(1);
      expect(readJson(join(out, 'run.json')).recordings[0].reason).toMatch(new RegExp(`^raw layout: the file reads as ${read} s .* declares duration_s: 0\\.05; .*check the group's layout\\.channels, layout\\.sample_type and layout\\.header_bytes`));
    }
  });
});

describe('a CSV file cut short (a copy or capture stopped part-way)', () => {
  // RFC 4180 (2.2) lets the last record end without a line break, so only one that also shows a sign of a cut is noted. The
  // file is numpy's (test/fixtures/make-float-grid-fixtures.py); the cuts are made here, byte for byte.
  const whole = readFileSync(fixture('float-grid', 'a12.csv'), 'utf8');
  const lines = whole.split('\n').filter(Boolean);

  it('takes a last line without a line end and without a sign of a cut as whole (RFC 4180, 2.2: the last record may or may not end with a line break)', async () => {
    const { rec, channels } = await readAll(write('unended.csv', whole.slice(0, -1)));
    expect(channels[0].length).toBe(lines.length - 1);
    expect(rec.notes).toEqual([]);
  });

  it('leaves out a last line whose value was cut mid-number: printed shorter than the same column on the line before', async () => {
    // The last line whose value has six decimals, cut three digits short.
    const at = lines.map((l, i) => (i > 1 && /,-?0\.\d{6}$/.test(l) && !/0{6}$/.test(l) ? i : -1)).reduce((a, b) => Math.max(a, b));
    const cut = [...lines.slice(0, at), lines[at].slice(0, -3)].join('\n');
    const { rec, channels } = await readAll(write('cut-value.csv', cut));
    const [, value] = lines[at].split(',');
    expect(channels[0].length).toBe(at - 1);
    expect(channels[0][at - 2]).toBe(Number(lines[at - 1].split(',')[1]));
    expect(rec.notes).toEqual([`line ${at + 1}, the last ("${lines[at].slice(0, -3)}"), has no line end and shows a cut (a copy or capture stopped part-way): its "v" value "${value.slice(0, -3)}" is printed shorter than the line before's "${lines[at - 1].split(',')[1]}"; it is left out of the figures: if it is whole, end the file with a line end`]);
  });

  it('leaves out a last line whose time, cut mid-digit, steps back', async () => {
    const last = lines[lines.length - 1], before = lines[lines.length - 2].split(',')[0];
    const cut = [...lines.slice(0, -1), last.slice(0, 4)].join('\n'); // "3.99" of "3.999,…"
    const { rec, channels } = await readAll(write('cut-time.csv', cut));
    expect(channels[0].length).toBe(lines.length - 2);
    expect(rec.notes).toContain(`line ${lines.length}, the last ("${last.slice(0, 4)}"), has no line end and shows a cut (a copy or capture stopped part-way): its time ${last.slice(0, 4)} steps back from ${before} on the line before, and it holds 1 of the header's 2 fields; it is left out of the figures: if it is whole, end the file with a line end`);
  });
});
