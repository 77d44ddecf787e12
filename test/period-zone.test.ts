// --since and --until read a date-time without a zone as UTC, as every time quern reads from files: ISO 8601 leaves a time
// without a zone designator to be agreed between the parties (ISO 8601-1:2019, 4.3.2; from memory), and the recordings' own
// starts (Broadcast Wave origination, CSV date-times) are taken as UTC. A lab's nightly job must select the same recordings
// whatever zone the machine it runs on is set to; a zone is set in the child's environment, as a job's would be.
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { encodeWav } from '../scripts/wav-file.js';
import { oneRigArchive, quernWith, readJson, tempDir } from './helpers.js';

const FS = 1000;
const ARCHIVE_YAML = oneRigArchive(FS);

/** A second of a 50 Hz tone whose Broadcast Wave origination is `start` (UTC). */
const capture = (start: Date) => encodeWav({ sampleRate: FS, channels: [Float64Array.from({ length: FS }, (_, i) => 0.01 * Math.sin(2 * Math.PI * 50 * i / FS))], origination: start });

// Starts around midnight UTC of 16 November 2026: Auckland keeps daylight time then (UTC+13), so its midnight is 11:00 UTC the day before.
const STARTS = { 'rig/a.wav': Date.UTC(2026, 10, 15, 10), 'rig/b.wav': Date.UTC(2026, 10, 15, 12), 'rig/c.wav': Date.UTC(2026, 10, 16, 2), 'rig/d.wav': Date.UTC(2026, 10, 17, 1) };

function archive() {
  const root = tempDir(), dir = join(root, 'archive');
  mkdirSync(join(dir, 'rig'), { recursive: true });
  writeFileSync(join(dir, 'archive.yaml'), ARCHIVE_YAML);
  for (const [name, start] of Object.entries(STARTS)) writeFileSync(join(dir, name), capture(new Date(start)));
  return { root, dir };
}

describe('a period on a machine whose zone is not UTC', () => {
  it.each(['Pacific/Auckland', 'America/Los_Angeles'])('in %s, 2026-11-16 and 2026-11-16T00:00 select the same recordings, and the terminal gives the bounds in UTC', (zone) => {
    const { root, dir } = archive();
    const selected = (name: string, ...period: string[]) => {
      const out = join(root, name);
      const r = quernWith({ TZ: zone }, 'reduce', dir, '--out', out, '--jobs', '1', ...period);
      expect(r.code, r.stdout + r.stderr).toBe(0);
      return { stdout: r.stdout, recordings: readJson(join(out, 'run.json')).recordings.map((x: any) => x.recording) };
    };
    const date = selected('date', '--since', '2026-11-16', '--until', '2026-11-17');
    const dateTime = selected('date-time', '--since', '2026-11-16T00:00', '--until', '2026-11-17T00:00:00');
    expect(date.recordings).toEqual(['rig/c.wav']);
    expect(dateTime.recordings).toEqual(date.recordings);
    for (const r of [date, dateTime]) expect(r.stdout).toContain('  period:  from 2026-11-16T00:00:00Z until 2026-11-17T00:00:00Z (UTC; a start at the end is left out): 1 recording starts in it');
    // A zone given is kept: midnight in Auckland's daylight time is 11:00 UTC the day before, which takes b.wav as well.
    const zoned = selected('zoned', '--since', '2026-11-16T00:00+13:00', '--until', '2026-11-17');
    expect(zoned.recordings).toEqual(['rig/b.wav', 'rig/c.wav']);
    expect(zoned.stdout).toContain('  period:  from 2026-11-15T11:00:00Z until 2026-11-17T00:00:00Z');
  }, 120_000);
});
