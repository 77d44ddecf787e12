// A recording that fails to reduce but whose header is whole (a capture cut short in its data) is placed in a period by
// the start its header gives, as a readable one is. References: EBU Tech 3285 (Broadcast Wave), the bext chunk's
// OriginationDate at byte 320 and OriginationTime at byte 330 of its data, "yyyy-mm-dd" and "hh:mm:ss" (from memory);
// the RIFF rule that the data chunk's size counts its sample bytes (Microsoft/IBM RIFF specification, 1991, from memory).
import { mkdirSync, utimesSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { encodeWav } from '../scripts/wav-file.js';
import { openRecording, type OpenOptions } from '../stages/read/open.js';
import { RecordingError } from '../stages/read/recording.js';
import { fixture, quern, readJson, tempDir } from './helpers.js';

const FS = 8000;

/** One second of a 100 Hz tone, with a bext origination when given; `cut`: the file ends halfway through its samples. */
function capture(origination: Date | null, cut = false): Buffer {
  const x = new Float64Array(FS).map((_, i) => 0.3 * Math.sin(2 * Math.PI * 100 * i / FS));
  const whole = encodeWav({ sampleRate: FS, channels: [x], ...(origination ? { origination } : {}) });
  return cut ? whole.subarray(0, whole.length - FS) : whole;
}

/** The bext chunk's origination as EBU Tech 3285 lays it out, read from the bytes alone (not by quern's reader). */
function bextOrigination(b: Buffer): string {
  const at = b.indexOf('bext', 12, 'latin1') + 8;
  return `${b.toString('latin1', at + 320, at + 330)}T${b.toString('latin1', at + 330, at + 338)}Z`;
}

/** The data chunk's declared size and the sample bytes the file holds after its header. */
function dataBytes(b: Buffer): { declared: number; present: number } {
  const at = b.indexOf('data', 12, 'latin1');
  return { declared: b.readUInt32LE(at + 4), present: b.length - at - 8 };
}

const DECLARATION = `groups:
  - name: rig
    match: "rig/*.wav"
    sample_rate: ${FS}
    channels:
      - { name: acc, quantity: acceleration, unit: m/s^2, scale: 10, range: [-10, 10], bits: 16, max_frequency_hz: 3000 }
`;

/** Modification time 2026-12-01 03:00 UTC: inside a nightly period that the captures' own starts lie before. */
const COPIED = new Date(Date.UTC(2026, 11, 1, 3));

function archiveOf(files: Record<string, Buffer>) {
  const root = tempDir(), archive = join(root, 'archive');
  mkdirSync(join(archive, 'rig'), { recursive: true });
  writeFileSync(join(archive, 'archive.yaml'), DECLARATION);
  writeFileSync(join(archive, 'reduction.yaml'), 'statistics: {}\n');
  const add = (name: string, b: Buffer) => { writeFileSync(join(archive, name), b); utimesSync(join(archive, name), COPIED, COPIED); };
  for (const [name, b] of Object.entries(files)) add(name, b);
  return { root, archive, add };
}
const reduce = (archive: string, out: string, ...more: string[]) => quern('reduce', archive, '--out', out, '--jobs', '1', '--log', 'plain', ...more);

const GOOD = 'rig/2026-11-28-0100.wav', CUT = 'rig/2026-11-28-0500.wav', LATE = 'rig/2026-11-20-0500.wav';

describe('a recording cut short in its data after a whole bext chunk', () => {
  it('is built as the test means: a bext origination of 2026-11-28 05:00, a data chunk declaring more bytes than follow', () => {
    const b = capture(new Date(Date.UTC(2026, 10, 28, 5)), true);
    expect(bextOrigination(b)).toBe('2026-11-28T05:00:00Z');
    const d = dataBytes(b);
    expect(d.present).toBeLessThan(d.declared);
    expect(d.present).toBeGreaterThan(0);
  });

  it('is selected and named FAILED by a bounded run over its own day, and left out of a later period, by its header\'s start', () => {
    const { root, archive, add } = archiveOf({
      [GOOD]: capture(new Date(Date.UTC(2026, 10, 28, 1))),
      [CUT]: capture(new Date(Date.UTC(2026, 10, 28, 5)), true),
    });
    const out = join(root, 'out'), nightly = join(root, 'nightly');
    // Twice: the second run knows the failure from its stored entry, and still places it by its header.
    for (let i = 0; i < 2; i++) {
      const r = reduce(archive, out, '--since', '2026-11-28', '--until', '2026-11-29');
      expect(r.code).toBe(1);
      expect(r.stdout).toContain(`FAILED  ${CUT}: `);
      const run = readJson(join(out, 'run.json'));
      expect(run.period.selected).toBe(2);
      expect(run.recordings.find((x: { recording: string }) => x.recording === CUT)?.status).toBe('failed');
      expect(readJson(join(out, 'quality.json')).recordings.find((x: { recording: string }) => x.recording === CUT)?.status).toBe('failed');
    }

    // A nightly run over a later period, its modification time inside it: neither capture starts in it.
    const first = reduce(archive, nightly, '--since', '2026-12-01');
    expect(first.code).toBe(0);
    expect(first.stdout).not.toContain('FAILED');
    expect(readJson(join(nightly, 'run.json')).period.selected).toBe(0);

    // A cut capture of 2026-11-20 copied in after that run: a late arrival, named as one, and not in the period.
    add(LATE, capture(new Date(Date.UTC(2026, 10, 20, 5)), true));
    const late = reduce(archive, nightly, '--since', '2026-12-01');
    expect(late.code).toBe(1);
    expect(late.stdout).toContain(`FAILED  ${LATE} (a late arrival): `);
    const period = readJson(join(nightly, 'run.json')).period;
    expect(period.selected).toBe(0);
    expect(period.late_arrivals.recordings).toEqual([expect.objectContaining({ recording: LATE, start_time: '2026-11-20T05:00:00.000Z', status: 'failed' })]);

    // The next night: its stored failure keeps no start, so its header places it again, before the period.
    const next = reduce(archive, nightly, '--since', '2026-12-01');
    expect(readJson(join(nightly, 'run.json')).period.selected).toBe(0);
    expect(next.stdout).not.toMatch(new RegExp(`FAILED  ${LATE}: `));
  });

  it('shows in quern check the start a period places it by: its header\'s, else its modification time, said so', () => {
    const { archive } = archiveOf({
      [CUT]: capture(new Date(Date.UTC(2026, 10, 28, 5)), true),
      'rig/unstamped.wav': capture(null, true),
    });
    const r = quern('check', archive);
    expect(r.code).toBe(1);
    expect(r.stdout).toMatch(new RegExp(`^FAILED  ${CUT}  \\[rig\\]  .*the file ends .* early.*; starts 2026-11-28T05:00:00\\.000Z \\(read before it failed\\)$`, 'm'));
    expect(r.stdout).toMatch(/^FAILED {2}rig\/unstamped\.wav {2}\[rig\] {2}.*; no start could be read \(a period goes by its modification time\)$/m);
  });
});

// Files whose start is read at open but whose open fails after it. The starts are those the independent writers stored:
// h5py's attribute (test/fixtures/make-format-fixtures.py), scipy.io.savemat's and hdf5storage's char variable
// (test/fixtures/make-mat-fixtures.py), and a CSV time column's ISO 8601 date-time as written here.
describe('a recording whose open fails after its start was read', () => {
  /** The error the open throws, which must be a RecordingError. */
  const failure = async (path: string, options: OpenOptions): Promise<RecordingError> => {
    const e = await openRecording(path, options).then(async (rec) => { await rec.close(); return null; }, (err: unknown) => err);
    expect(e).toBeInstanceOf(RecordingError);
    return e as RecordingError;
  };

  it('HDF5: channel names that are no text, after the start attribute', async () => {
    const e = await failure(fixture('formats', 'acq-rows.h5'), { hdf5: { datasets: ['/acq/signals'], channel_axis: 1, sample_rate_attribute: 'sample_rate', start_time_attribute: 'start_time', channel_names_attribute: 'sample_rate' } });
    expect(e.message).toMatch(/\(the channel names\) holds number, not text/);
    expect(e.startTime?.toISOString()).toBe('2026-11-16T22:00:00.000Z');
  });

  it('MAT-file (level 5): channel names that are no text, after the start variable', async () => {
    const e = await failure(fixture('mat', 'rig-columns.mat'), { mat: { variables: ['data'], channel_axis: 1, sample_rate_variable: 'fs', start_time_variable: 't0', channel_names_variable: 'fs' } });
    expect(e.message).toMatch(/variable "fs" .* is a double array; the channel names are/);
    expect(e.startTime?.toISOString()).toBe('2026-03-14T02:00:00.000Z');
  });

  it('MAT-file (version 7.3): a time variable of one value, after the start variable', async () => {
    const e = await failure(fixture('mat', 'rig-columns-73.mat'), { mat: { variables: ['data'], channel_axis: 1, sample_rate_variable: 'fs', start_time_variable: 't0', time_variable: 'fs' } });
    expect(e.message).toMatch(/^version 7.3 MAT-file \(HDF5\): dataset "\/fs" \(the time\) is 1 × 1; it must be a vector of 2000 times/);
    // hdf5storage stored '2026-03-15T02:00:00+01:00'.
    expect(e.startTime?.toISOString()).toBe('2026-03-15T01:00:00.000Z');
  });

  // 100 rows at 100 Hz from 2026-11-28 05:00 UTC, declared as 200 Hz: the time column disagrees with the declaration.
  const csvRows = `time,acc\n${Array.from({ length: 100 }, (_, i) => `2026-11-28T05:00:${String(Math.floor(i / 100)).padStart(2, '0')}.${String(i % 100).padStart(2, '0')}Z,${(0.1 * Math.sin(i)).toFixed(4)}`).join('\n')}\n`;

  it('CSV: a time column stepping at another rate than declared, after its first date-time', async () => {
    const path = join(tempDir(), 'rate.csv');
    writeFileSync(path, csvRows);
    const e = await failure(path, { sampleRate: 200 });
    expect(e.message).toMatch(/the time column steps at 100\.000 Hz but the declaration says 200 Hz/);
    expect(e.startTime?.toISOString()).toBe('2026-11-28T05:00:00.000Z');
  });

  it('shows in quern check the CSV file\'s start, read before it failed', () => {
    const archive = join(tempDir(), 'archive');
    mkdirSync(join(archive, 'rig'), { recursive: true });
    writeFileSync(join(archive, 'archive.yaml'), 'groups:\n  - name: rig\n    match: "rig/*.csv"\n    sample_rate: 200\n');
    writeFileSync(join(archive, 'rig', 'rate.csv'), csvRows);
    const r = quern('check', archive);
    expect(r.code).toBe(1);
    expect(r.stdout).toMatch(/^FAILED {2}rig\/rate\.csv {2}\[rig\] {2}.*the time column steps at 100\.000 Hz but the declaration says 200 Hz.*; starts 2026-11-28T05:00:00\.000Z \(read before it failed\)$/m);
  });
});
