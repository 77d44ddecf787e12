// A capture still being written when the run found it: figures from part of a recording are never kept. The worker checks
// the file's size and modification time after reading it against what the scan saw, and stores a failure instead, under
// the scan's identity, so that the next run, seeing the file changed, reads it again.
import { appendFileSync, statSync, utimesSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { loadSpec } from '../pipeline/declare/declare.js';
import type { RecordingJob } from '../pipeline/plan/plan.js';
import { reduceBatch, type BatchItem } from '../pipeline/reduce/batch.js';
import { decodeResults, recordBody, recordFacts } from '../pipeline/store/record.js';
import { encodeWav } from '../scripts/wav-file.js';
import { tempDir } from './helpers.js';

async function capture() {
  const dir = tempDir(), fs = 8000;
  // An invented test rig's accelerometer: a 50 Hz tone.
  const a = Float64Array.from({ length: fs }, (_, i) => 0.3 * Math.sin((2 * Math.PI * 50 * i) / fs));
  const path = join(dir, 'rig.wav');
  writeFileSync(path, encodeWav({ sampleRate: fs, channels: [a], encoding: 'pcm16' }));
  const { spec } = await loadSpec(dir);
  const job: RecordingJob = { recording: 'rig.wav', path, group: 'rig', format: null, sampleRate: null, layout: null, channels: [{ name: 'acc', quantity: 'acceleration', unit: 'g', scale: 1, offset: 0, range: null, bits: 16, max_frequency_hz: null }], labels: {}, durationS: null, spec, chunkFrames: 4096 };
  const item = (): BatchItem => {
    const s = statSync(path);
    return { job, store: { identity: { size: s.size, mtimeMs: s.mtimeMs, hash: null }, hashContent: false, readAtMs: Date.now(), declKey: 'k', version: 'test', keys: { statistics: 'k' }, specHash: 'h', compute: ['statistics'], reused: [], previous: null, stalledBefore: false } };
  };
  return { path, item };
}

const stored = (bytes: Uint8Array) => ({ facts: recordFacts(bytes), results: decodeResults(recordBody(bytes)) });

describe('a recording that changes while it is read', () => {
  it('is stored as failed, with the reason, under the size the scan saw, when more data arrived after the scan', async () => {
    const { path, item } = await capture();
    const found = item();
    appendFileSync(path, Buffer.alloc(4096)); // the logger writes on
    const [r] = await reduceBatch([found]);
    const { facts, results } = stored(r.bytes);
    expect(results.status).toBe('failed');
    expect(results.reason).toBe(`the file changed since the run found it (${found.store.identity.size} bytes when the run found it, ${found.store.identity.size + 4096} after reading): probably still being written; nothing from this read is kept, and the next run reads it again`);
    expect(results.groups).toEqual({});
    expect(facts.identity.size).toBe(found.store.identity.size); // so the next run sees a change and reads it again
  });

  it('is stored as failed when only its modification time moved', async () => {
    const { path, item } = await capture();
    const found = item();
    const later = new Date(Math.floor(found.store.identity.mtimeMs / 1000) * 1000 + 5000);
    utimesSync(path, later, later);
    const [r] = await reduceBatch([found]);
    expect(stored(r.bytes).results.reason).toContain(`(modified again at ${later.toISOString()})`);
  });

  it('reduces as usual when the file is as the scan saw it', async () => {
    const { item } = await capture();
    const [r] = await reduceBatch([item()]);
    const { results } = stored(r.bytes);
    expect(results.status, results.reason).toBe('reduced');
    expect(results.groups.statistics.columns[0]).toHaveProperty('rms');
  });
});
