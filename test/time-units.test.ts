// A CSV time column in milliseconds, microseconds or nanoseconds: the unit named in its header, or a note where none is.
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { fixture, readAll, readJson, tempDir } from './helpers.js';
import { timeColumnOf } from '../stages/read/csv.js';
import { reduceRecording } from '../pipeline/reduce/compute.js';
import { slowTimeColumnNote } from '../pipeline/reduce/header-notes.js';
import { channel } from './reduce-signal.js';

const write = (name: string, text: string) => {
  const path = join(tempDir(), name);
  writeFileSync(path, text);
  return path;
};

describe('a time column\'s unit named in its header (SI prefixes: common practice)', () => {
  it.each([
    ['time_ms', 1e3], ['time [ms]', 1e3], ['time (ms)', 1e3], ['t_ms', 1e3], ['t[ms]', 1e3], ['ms', 1e3], ['Time_MS', 1e3],
    ['time_us', 1e6], ['t (µs)', 1e6], ['time [μs]', 1e6], ['µs', 1e6], ['time_ns', 1e9],
    ['time_s', 1], ['time [s]', 1], ['time (s)', 1], ['seconds', 1], ['time (sec)', 1], ['Time [sec]', 1], ['time_secs', 1],
  ])('"%s" divides its numbers by %d into seconds, and says so', (header, perSecond) => {
    expect(timeColumnOf(header)).toEqual({ perSecond, stated: true });
  });

  it('a bare time, t or timestamp is read as seconds on trust, and other names are channels', () => {
    for (const h of ['time', 't', 'timestamp', 'datetime']) expect(timeColumnOf(h)).toEqual({ perSecond: 1, stated: false });
    // A bare s, us or ns is more likely a channel (NS and EW: a geophone's north–south and east–west axes).
    for (const h of ['s', 'us', 'ns', 'NS', 'acc_x', 'mass', 'time_min', 'tms_x']) expect(timeColumnOf(h)).toBeNull();
  });

  it.each([['timestamp_ms', 1e3], ['timestamp [ms]', 1e3], ['timestamp_us', 1e6], ['Timestamp (s)', 1]])('"%s" is read as a time column too, divided by %d', (header, perSecond) => {
    expect(timeColumnOf(header)).toEqual({ perSecond, stated: true });
  });

  it('refuses a time column in minutes, hours or days, naming the units read, rather than reducing it as a channel', async () => {
    // 0.5 ms steps written in each unit (1 min = 60 s, 1 h = 3600 s: SI, common practice); a declared rate does not save them.
    const cases: [string, string, number][] = [['time [min]', 'min', 60], ['time (h)', 'h', 3600], ['t_min', 'min', 60], ['time_h', 'h', 3600], ['timestamp [days]', 'days', 86400]];
    for (const [header, unit, seconds] of cases) {
      const text = `${header},acc\n${[0, 1, 2, 3].map((i) => `${(i * 0.0005 / seconds).toPrecision(9)},${i}`).join('\n')}\n`;
      for (const options of [{}, { sampleRate: 2000 }]) {
        await expect(readAll(write('a.csv', text), options)).rejects.toThrow(new RegExp(`^line 1: column "${header.replace(/[[\]()]/g, '\\$&')}" is a time column in ${unit}, a unit quern does not read; quern reads time in s \\(sec\\), ms, us \\(µs\\) or ns named in the header .*export the times in one of those \\(seconds: time \\[s\\]\\), or remove the column and set sample_rate`));
      }
    }
    // Names that only start like one stay channels: a temperature, a tacho, a bare NS axis.
    for (const h of ['T [°C]', 't_amb', 'tacho', 'temp', 'NS', 'ns', 'us', 'time_of_day']) {
      const { rec } = await readAll(write('b.csv', `${h},acc\n1,2\n3,4\n`), { sampleRate: 100 });
      expect(rec.channelNames).toEqual([h, 'acc']);
    }
  });

  it('suggests time_ms where a declared rate is a thousand times the column\'s', async () => {
    await expect(readAll(write('a.csv', 'time,x\n0,1\n0.5,2\n1.0,3\n1.5,4\n'), { sampleRate: 2000 }))
      .rejects.toThrow(/the time column steps at 2\.00000 Hz but the declaration says 2000 Hz; .*"time" may hold milliseconds: name it time_ms in the header/);
  });
});

describe('two tones at 2560 Hz, their times in milliseconds, against scipy.signal.welch at the true rate (test/fixtures/make-csv-fixtures.py)', () => {
  interface Tones { files: Record<string, string>; rate: number; frames: number; segment: number; overlap: number; dominant_frequency: number; band: [number, number]; band_rms: number }
  const tones = readJson<{ tones: Tones }>(fixture('csv', 'expected.json')).tones;
  const spec = { statistics: {}, spectrum: { segment: tones.segment, overlap: tones.overlap, window: 'hann' as const }, bands: [tones.band] };
  const reduce = (file: string, decl = channel({ name: 'acc', scale: 1 })) =>
    reduceRecording({ recording: file, path: fixture('csv', file), group: 'g', format: null, sampleRate: null, layout: null, channels: [decl], labels: {}, durationS: null, spec, chunkFrames: 4093 });

  it('a time_ms column gives the true rate, and the spectrum scipy gives at it', async () => {
    const r = await reduce('tones-time_ms.csv');
    expect(r.reason).toBeUndefined();
    expect(r.sampleRate).toBe(tones.rate);
    const row = r.rows[0] as Record<string, number>;
    expect(row.dominant_frequency).toBe(tones.dominant_frequency);
    expect(Math.abs(row[`band_${tones.band[0]}_${tones.band[1]}_rms`] / tones.band_rms - 1)).toBeLessThan(1e-9);
    expect(r.messages).toEqual([]);
  });

  it('the same times under a plain "time" header read as seconds (a thousand times too slow), with a note saying how to name the column', async () => {
    const r = await reduce('tones-time-ms.csv');
    expect(r.sampleRate).toBe(tones.rate / 1000);
    expect(r.messages[0]).toMatch(/^the time column "time" names no unit, so it was read as seconds, giving 2\.56 Hz: too slow for acceleration \(under 10 Hz\); if it holds milliseconds, name it time_ms/);
  });

  it('notes no slow channel that is real: strain or temperature at 1 Hz', () => {
    const slow = { secondsAssumed: 'time', sampleRate: 1 };
    expect(slowTimeColumnNote([channel({ quantity: 'strain' }), channel({ quantity: 'temperature' })], slow)).toBeNull();
    expect(slowTimeColumnNote([channel({ quantity: 'acceleration' })], { sampleRate: 2 })).toBeNull(); // a unit was named
    expect(slowTimeColumnNote([channel({ quantity: 'voltage', pulses_per_rev: 1 })], slow)).toMatch(/too slow for tacho/);
    expect(slowTimeColumnNote([channel({ quantity: 'sound_pressure' })], { ...slow, sampleRate: 10 })).toBeNull();
  });
});
