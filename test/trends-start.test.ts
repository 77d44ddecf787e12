// trends.parquet places every row in time: a recording that keeps no start of its own (a WAV without a Broadcast Wave
// chunk) is placed, in the history and in the table alike, at its file's modification time, and start_time_source says so.
// Reference: the modification time the operating system gives (fs.utimesSync sets it, fs.statSync reads it back), and the
// Broadcast Wave origination written into the other files (EBU Tech 3285, origination date and time; taken as UTC).
import { mkdirSync, statSync, utimesSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { describe, expect, it } from 'vitest';
import { encodeWav } from '../scripts/wav-file.js';
import { oneRigArchive, quern, tempDir } from './helpers.js';

const FS = 1000;
const ARCHIVE_YAML = oneRigArchive(FS);
const tone = (n: number) => Float64Array.from({ length: FS }, (_, i) => (0.01 + 0.0001 * n) * Math.sin(2 * Math.PI * 50 * i / FS));

describe('trends.parquet start_time', () => {
  it('is the modification time where the recording keeps no start, named as such, and orders the rows as the history does', async () => {
    const root = tempDir(), archive = join(root, 'archive'), out = join(root, 'out');
    mkdirSync(join(archive, 'rig'), { recursive: true });
    writeFileSync(join(archive, 'archive.yaml'), ARCHIVE_YAML);
    writeFileSync(join(root, 'spec.yaml'), 'statistics: {}\ntrends: { features: [rms] }\n');
    for (let n = 0; n < 4; n++) writeFileSync(join(archive, 'rig', `n${n}.wav`), encodeWav({ sampleRate: FS, channels: [tone(n)], origination: new Date(Date.UTC(2026, 10, 1 + n, 2)) }));
    // No Broadcast Wave chunk: its start is unknown; copied in with a modification time between nights 1 and 2.
    const bare = join(archive, 'rig', 'copied.wav');
    writeFileSync(bare, encodeWav({ sampleRate: FS, channels: [tone(9)] }));
    const modified = new Date(Date.UTC(2026, 10, 2, 14, 30, 15, 250));
    utimesSync(bare, modified, modified);
    expect(statSync(bare).mtimeMs).toBe(modified.getTime());

    const r = quern('reduce', archive, '--out', out, '--spec', join(root, 'spec.yaml'), '--jobs', '1', '--quiet');
    expect(r.code, r.stdout + r.stderr).toBe(0);
    const db = await (await DuckDBInstance.create()).connect();
    const rows = (await db.runAndReadAll(`select recording, epoch_ms(start_time) as t, start_time_source as source from '${out}/trends.parquet' order by start_time`)).getRowObjectsJS() as { recording: string; t: number | bigint; source: string }[];
    expect(rows.map((x) => [x.recording, Number(x.t), x.source])).toEqual([
      ['rig/n0.wav', Date.UTC(2026, 10, 1, 2), 'recording'],
      ['rig/n1.wav', Date.UTC(2026, 10, 2, 2), 'recording'],
      ['rig/copied.wav', modified.getTime(), 'modified'],
      ['rig/n2.wav', Date.UTC(2026, 10, 3, 2), 'recording'],
      ['rig/n3.wav', Date.UTC(2026, 10, 4, 2), 'recording'],
    ]);
    // features.parquet keeps the capture's start alone: null where the recording keeps none.
    const features = (await db.runAndReadAll(`select recording, start_time from '${out}/features.parquet' where recording = 'rig/copied.wav'`)).getRowObjectsJS() as { start_time: unknown }[];
    expect(features.map((x) => x.start_time)).toEqual([null]);
  }, 120_000);
});
