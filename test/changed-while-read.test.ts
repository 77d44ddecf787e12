// A capture still being written when the run found it: figures from part of a recording are never kept. The worker checks
// the file's size and modification time after reading it against what the scan saw, and stores a failure instead, under
// a key that has the next run read it again, whatever it then finds (its content hash, taken while the file was rewritten,
// may already be the new content's).
import { appendFileSync, mkdirSync, statSync, utimesSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { loadSpec } from '../pipeline/declare/declare.js';
import type { RecordingJob } from '../pipeline/plan/plan.js';
import { reduceBatch, type BatchItem } from '../pipeline/reduce/batch.js';
import { scanPack } from '../pipeline/store/pack.js';
import { decodeResults, encodeRecord, READ_AGAIN, recordBody, recordFacts, type EntryFacts } from '../pipeline/store/record.js';
import { encodeWav } from '../scripts/wav-file.js';
import { quern, readJson, tempDir } from './helpers.js';

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
    expect(facts.identity.size).toBe(found.store.identity.size);
    expect(facts.failureKey).toBe(READ_AGAIN); // so the next run reads it again, whatever it finds
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

describe('the run after a recording changed while it was read', () => {
  // The stored failure as the worker leaves it when the file was rewritten during the read, but with the identity the
  // next scan finds (the same size, and a content hash of the new content): only its key tells the next run to read it.
  async function storedFailure(keyOf: (specHash: string) => string) {
    const dir = tempDir(), archive = join(dir, 'rig'), out = join(dir, 'out');
    mkdirSync(archive);
    writeFileSync(join(archive, 'archive.yaml'), 'groups:\n  - name: rig\n    match: "*.wav"\n    channels:\n      - { name: acc, quantity: acceleration, unit: g }\n');
    const a = Float64Array.from({ length: 8000 }, (_, i) => 0.3 * Math.sin((2 * Math.PI * 50 * i) / 8000));
    writeFileSync(join(archive, 'night.wav'), encodeWav({ sampleRate: 8000, channels: [a], encoding: 'pcm16' }));
    const first = quern('reduce', archive, '--out', out, '--jobs', '1', '--quiet');
    expect(first.code, first.stderr).toBe(0);
    const failureKey = keyOf(readJson(join(out, 'run.json')).spec.hash);
    const pack = join(out, 'cache', 'entries.pack');
    let facts: EntryFacts | null = null;
    await scanPack(pack, (r) => { facts = r.facts; });
    const failed: EntryFacts = { ...facts!, status: 'failed', reason: 'the file changed since the run found it (modified again): probably still being written', groupKeys: {}, failureKey };
    appendFileSync(pack, encodeRecord(failed, { status: 'failed', reason: failed.reason, base: null, groups: {}, seconds: 0 } as never));
    const next = quern('reduce', archive, '--out', out, '--jobs', '1', '--quiet');
    return { next, run: readJson(join(out, 'run.json')) };
  }

  it('reads it again, though its size, time and content are as stored', async () => {
    const { next, run } = await storedFailure(() => READ_AGAIN);
    expect(next.code, next.stderr).toBe(0);
    expect(run.recordings[0]).toMatchObject({ status: 'reduced', why: 'changed while it was read before; read again' });
  });

  it('while an ordinary failure under an unchanged spec is kept (the contrast)', async () => {
    const { run } = await storedFailure((specHash) => specHash);
    expect(run.recordings[0]).toMatchObject({ status: 'failed', why: 'failed before; file, declaration and spec unchanged' });
  });
});
