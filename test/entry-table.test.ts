// The store's packed columns give back every entry's facts exactly as the pack holds them (the facts' JSON is the
// reference: the same keys, in the same order, with the same values), and memory handed back is only memory owned whole.
import { describe, expect, it } from 'vitest';
import { quern, sampleArchiveCopy } from './helpers.js';
import { join } from 'node:path';
import { scanPack, type Located } from '../pipeline/store/pack.js';
import { Store } from '../pipeline/store/store.js';
import { EntryTable } from '../pipeline/store/entry-table.js';
import type { EntryFacts } from '../pipeline/store/record.js';
import { ownBuffers } from '../pipeline/store/release.js';

describe('entries in packed columns', () => {
  it('give back each entry\'s place and facts byte for byte as the pack holds them', async () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    quern('reduce', archive, '--out', out, '--quiet');
    const stored: Located[] = [];
    await scanPack(join(out, 'cache', 'entries.pack'), (r) => stored.push(r));
    expect(stored.length).toBeGreaterThan(3);
    const store = await Store.open(out);
    expect([...store.entries.keys()].sort()).toEqual(stored.map((r) => r.facts.recording).sort());
    for (const r of stored) {
      const e = store.get(r.facts.recording)!;
      expect(JSON.stringify(e.facts)).toBe(JSON.stringify(r.facts));
      expect({ file: e.file, offset: e.offset, length: e.length, bodySha: e.bodySha, status: e.status, group: e.group })
        .toEqual({ file: r.file, offset: r.offset, length: r.length, bodySha: r.bodySha, status: r.facts.status, group: r.facts.group });
    }
    expect(stored.some((r) => r.facts.status === 'failed')).toBe(true); // the sample archive plants a truncated file
  });

  it('give back start times and content hashes as stored, whether or not they pack into numbers and bytes', () => {
    const table = new EntryTable();
    const facts = (recording: string, startTime: string | null, hash: string | null): EntryFacts => ({
      recording, group: 'g', status: 'reduced', version: '1', identity: { size: 10, mtimeMs: 1.5, hash }, readAtMs: 2.5, declKey: 'k', groupKeys: { statistics: 'x' },
      seconds: 0.1, frames: 4, sampleRate: 8000, startTime, channels: 1, notes: { '': [] }, storedAt: 3,
    });
    const cases = [
      facts('a.wav', '2024-02-22T04:00:52.595Z', 'ab'.repeat(32)), // as toISOString writes them: a number and bytes
      facts('b.wav', '2024-02-22T06:00:52+02:00', 'AB'.repeat(32)), // other spellings are kept as text
      facts('c.wav', null, null),
      facts('d.wav', '+012345-01-01T00:00:00.000Z', 'not a hash'),
    ];
    cases.forEach((f, i) => table.set({ file: 'p', offset: i, length: 1, bodySha: new Uint8Array(32) }, f));
    for (const f of cases) expect(JSON.stringify(table.entry(f.recording)!.facts)).toBe(JSON.stringify(f));
  });

  it('hand back only buffers their views fill from end to end', () => {
    const batch = new Uint8Array(100);
    const pool = new Uint8Array(8192);
    const own = ownBuffers([batch.subarray(0, 40), batch.subarray(40, 100), pool.subarray(0, 60), null, new Uint8Array(0)]);
    expect(own).toEqual([batch.buffer]);
    expect(ownBuffers([batch.subarray(0, 40), batch.subarray(50, 100)])).toEqual([]);
  });
});
