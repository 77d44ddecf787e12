// The store's packed columns give back every entry's facts exactly as the pack holds them (the facts' JSON is the
// reference: the same keys, in the same order, with the same values), and memory handed back is only memory owned whole.
import { describe, expect, it } from 'vitest';
import { quern, sampleArchiveCopy } from './helpers.js';
import { join } from 'node:path';
import { scanPack, type Located } from '../pipeline/store/pack.js';
import { Store } from '../pipeline/store/store.js';
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

  it('hand back only buffers their views fill from end to end', () => {
    const batch = new Uint8Array(100);
    const pool = new Uint8Array(8192);
    const own = ownBuffers([batch.subarray(0, 40), batch.subarray(40, 100), pool.subarray(0, 60), null, new Uint8Array(0)]);
    expect(own).toEqual([batch.buffer]);
    expect(ownBuffers([batch.subarray(0, 40), batch.subarray(50, 100)])).toEqual([]);
  });
});
