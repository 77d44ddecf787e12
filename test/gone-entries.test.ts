// Entries of recordings gone from the archive are dropped when a pack is rewritten: they count as superseded, so a pack
// whose recordings were mostly deleted is compacted, and every entry of a recording still present is kept as it was.
import { statSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { everyEntry } from '../pipeline/plan/cache.js';
import { encodeRecord, type EntryFacts, type EntryResults } from '../pipeline/store/record.js';
import { Store } from '../pipeline/store/store.js';
import { tempDir } from './helpers.js';

/** A stored record of `recording` carrying `floats` kept values (raw float32, so the record is about 4 bytes a value). */
function record(recording: string, floats: number) {
  const facts: EntryFacts = {
    recording, group: 'rig', status: 'reduced', version: 'test', identity: { size: 1, mtimeMs: 1, hash: null }, readAtMs: 10_000, declKey: 'd',
    groupKeys: {}, seconds: 0, frames: 1, sampleRate: 1, startTime: null, channels: 0, notes: {}, storedAt: 1,
  };
  const kept = Float32Array.from({ length: floats }, (_, i) => Math.sin(i));
  const results = { recording, group: 'rig', status: 'reduced', base: null, groups: { spectrum: { columns: [], tables: {}, notes: [], kept: { spectrum: [kept] } } } } as unknown as EntryResults;
  return { facts, bytes: encodeRecord(facts, results) };
}

const recordingsIn = async (out: string) => { const names: string[] = []; for await (const e of everyEntry(await Store.open(out))) names.push(e.recording); return names; };

describe('compacting a pack', () => {
  it('drops the entries of recordings no longer in the archive, and keeps the rest readable', async () => {
    const out = tempDir();
    const store = await Store.open(out, null);
    await store.append([record('a.wav', 100), record('b.wav', 600_000), record('c.wav', 600_000), record('d.wav', 600_000)]);
    // Nothing superseded while every recording is present: the pack stays as it is.
    expect(await store.compact(new Set(['a.wav', 'b.wav', 'c.wav', 'd.wav']))).toBe(false);
    // Without the archive's recordings (null), nothing counts as gone.
    expect(await store.compact(null)).toBe(false);
    const pack = join(out, 'cache', 'entries.pack');
    expect(statSync(pack).size).toBeGreaterThan(7_000_000);
    // b, c and d deleted: over 4 MB of entries of recordings gone, more than the live ones, so the pack is rewritten.
    expect(await store.compact(new Set(['a.wav']))).toBe(true);
    expect([...store.entries.keys()]).toEqual(['a.wav']);
    await store.close();
    expect(statSync(pack).size).toBeLessThan(10_000);
    expect(await recordingsIn(out)).toEqual(['a.wav']);
  });

  it('keeps a pack whose gone entries are few and small: a recording moved back in is reused, not recomputed', async () => {
    const out = tempDir();
    const store = await Store.open(out, null);
    await store.append([record('a.wav', 100), record('b.wav', 100)]);
    expect(await store.compact(new Set(['a.wav']))).toBe(false);
    await store.close();
    expect(await recordingsIn(out)).toEqual(['a.wav', 'b.wav']);
  });
});
