// A nightly run may find a capture still being written, which would read as a recording cut short. With --settle, a
// recording to compute whose modification time lies within the span before the scan is left whole to the next run:
// not reduced, not failed, named on the terminal and in run.json, and absent from the tables until it is taken.
import { mkdirSync, statSync, utimesSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { describe, expect, it } from 'vitest';
import { encodeWav } from '../scripts/wav-file.js';
import { quern, readJson, tempDir } from './helpers.js';

/** Recordings in features.parquet, read by an independent reader (DuckDB). */
async function recordingsIn(path: string): Promise<string[]> {
  const db = await (await DuckDBInstance.create()).connect();
  const rows = (await db.runAndReadAll(`select distinct recording from '${path}' order by recording`)).getRowObjectsJS();
  return rows.map((r) => String(r.recording));
}

/** An invented rig's archive: three one-second captures of a 50 Hz tone, finished an hour ago. */
function archive(): string {
  const dir = join(tempDir(), 'rig'), fs = 8000;
  const tone = Float64Array.from({ length: fs }, (_, i) => 0.3 * Math.sin((2 * Math.PI * 50 * i) / fs));
  mkdirSync(dir);
  writeFileSync(join(dir, 'archive.yaml'), 'groups:\n  - name: rig\n    match: "*.wav"\n    channels:\n      - { name: acc, quantity: acceleration, unit: g }\n');
  const anHourAgo = new Date(Date.now() - 3_600_000);
  for (const name of ['a.wav', 'b.wav', 'c.wav']) {
    writeFileSync(join(dir, name), encodeWav({ sampleRate: fs, channels: [tone], encoding: 'pcm16' }));
    utimesSync(join(dir, name), anHourAgo, anHourAgo);
  }
  return dir;
}

describe('--settle', () => {
  it('leaves a capture modified within the span to the next run, which takes it once it has settled', async () => {
    const dir = archive(), out = join(dir, '..', 'out');
    const now = new Date();
    utimesSync(join(dir, 'b.wav'), now, now); // the logger is still writing it
    const first = quern('reduce', dir, '--out', out, '--settle', '10m', '--quiet');
    expect(first.code, first.stdout + first.stderr).toBe(0); // waiting is no failure
    expect(first.stdout).toContain('2 of 2 recordings reduced');
    expect(first.stdout).toContain('1 left to settle');
    expect(first.stdout).toMatch(/SETTLING b\.wav: modified \d+ s before the scan \(--settle\), so it may still be written; left to the next run/);
    const run = readJson(join(out, 'run.json'));
    expect(run.counts).toMatchObject({ selected: 2, reduced: 2, failed: 0, settling: 1 });
    expect(run.settling).toEqual([{ recording: 'b.wav', group: 'rig', modified: new Date(statSync(join(dir, 'b.wav')).mtimeMs).toISOString(), age_s: expect.any(Number) }]);
    expect(run.settling[0].age_s).toBeGreaterThanOrEqual(0);
    expect(run.settling[0].age_s).toBeLessThan(600);
    expect(run.recordings.map((r: { recording: string }) => r.recording)).toEqual(['a.wav', 'c.wav']);
    expect(await recordingsIn(join(out, 'features.parquet'))).toEqual(['a.wav', 'c.wav']);

    // The next night: the capture has been finished for an hour.
    const later = new Date(Date.now() - 3_600_000);
    utimesSync(join(dir, 'b.wav'), later, later);
    const next = quern('reduce', dir, '--out', out, '--settle', '10m', '--quiet');
    expect(next.code, next.stdout + next.stderr).toBe(0);
    const again = readJson(join(out, 'run.json'));
    expect(again.counts).toMatchObject({ selected: 3, reduced: 3, recomputed: 1, reused: 2, settling: 0 });
    expect(again.settling).toEqual([]);
    expect(next.stdout).not.toContain('SETTLING');
    expect(await recordingsIn(join(out, 'features.parquet'))).toEqual(['a.wav', 'b.wav', 'c.wav']);
  });

  it('uses a stored result that still stands, takes a file dated after the scan, and without --settle takes everything', async () => {
    const dir = archive(), out = join(dir, '..', 'out');
    expect(quern('reduce', dir, '--out', out, '--quiet').code).toBe(0);
    // a.wav and b.wav are unchanged: their stored results stand, however long the span.
    // c.wav dated an hour ahead, as a rig whose clock runs fast writes it: its age cannot be judged, so it is taken.
    const ahead = new Date(Date.now() + 3_600_000);
    utimesSync(join(dir, 'c.wav'), ahead, ahead);
    const r = quern('reduce', dir, '--out', out, '--settle', '1d', '--quiet');
    expect(r.code, r.stdout + r.stderr).toBe(0);
    const run = readJson(join(out, 'run.json'));
    expect(run.counts).toMatchObject({ selected: 3, reduced: 3, recomputed: 1, settling: 0 });
    expect(run.recordings.find((x: { recording: string }) => x.recording === 'c.wav').recomputed.length).toBeGreaterThan(0);

    // Without the option nothing waits, however fresh.
    const now = new Date();
    utimesSync(join(dir, 'b.wav'), now, now);
    const plain = quern('reduce', dir, '--out', out, '--quiet');
    expect(plain.code).toBe(0);
    expect(readJson(join(out, 'run.json')).counts).toMatchObject({ selected: 3, recomputed: 1, settling: 0 });
  });

  it('refuses a span it cannot read, naming the option', () => {
    const dir = archive(), out = join(dir, '..', 'out');
    for (const bad of ['-5m', 'soon', '']) {
      const r = quern('reduce', dir, '--out', out, '--settle', bad, '--quiet');
      expect(r.code, r.stdout + r.stderr).toBe(2);
      expect(r.stderr).toMatch(/^quern: --settle /);
    }
  });
});
