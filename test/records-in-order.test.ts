// Stored records read in the order they lie, through one reused window: the same bytes as reading each record alone,
// across window edges, packs and records longer than the window; damage since the scan is still caught by the checksums.
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { RecordReader, RecordsInOrder, scanPack, type Located } from '../pipeline/store/pack.js';
import { encodeRecord, type EntryFacts, type EntryResults } from '../pipeline/store/record.js';
import { uniform } from './dsp-signals.js';
import { tempDir } from './helpers.js';

// Invented entries of varied sizes, some with float32 arrays (the kept spectra) and some without.
function pack(path: string, n: number, seed: number): void {
  const u = uniform(seed), records: Uint8Array[] = [];
  for (let i = 0; i < n; i++) {
    const recording = `night-${seed}/r${i}.wav`;
    const facts = { recording, group: 'g', status: 'reduced', version: '0', identity: { size: i, mtimeMs: i, hash: null }, readAtMs: 0, declKey: 'k', groupKeys: {}, seconds: 0, frames: 1, sampleRate: 1, startTime: null, channels: 1, notes: {}, storedAt: i } as EntryFacts;
    const bins = Math.floor(u() * 12_000);
    const groups = i % 3 ? { spectrum: { kept: { spectrum: [{ df: 1, segments: 1, density: Float32Array.from({ length: bins }, () => u()) }] } } } : { note: { text: 'x'.repeat(bins) } };
    records.push(encodeRecord(facts, { recording, group: 'g', status: 'reduced', base: null, groups } as unknown as EntryResults));
  }
  writeFileSync(path, Buffer.concat(records));
}

async function located(file: string): Promise<Located[]> {
  const found: Located[] = [];
  await scanPack(file, (r) => found.push(r));
  return found;
}

describe('records read in the order they lie', () => {
  it('give the same bytes as single reads, across window edges, packs, and records longer than the window', async () => {
    const dir = tempDir(), a = join(dir, 'entries.pack'), b = join(dir, 'entries-1-of-2.pack');
    pack(a, 60, 1);
    pack(b, 40, 2);
    const places = [...await located(a), ...await located(b)];
    expect(places.length).toBe(100);
    expect(Math.max(...places.map((p) => p.length))).toBeGreaterThan(16 << 10);
    const single = new RecordReader(), inOrder = new RecordsInOrder(16 << 10);
    // Every other record, as a history whose superseded records lie between its entries.
    for (const p of places.filter((_, i) => i % 2 === 0)) expect(Buffer.from(await inOrder.read(p, p.facts.recording))).toEqual(single.read(p, p.facts.recording));
    single.close();
    await inOrder.close();
  });

  it('refuse a record damaged or cut off since the scan', async () => {
    const dir = tempDir(), file = join(dir, 'entries.pack');
    pack(file, 10, 3);
    const places = await located(file);
    const bytes = (await import('node:fs')).readFileSync(file);
    bytes[places[4].offset + places[4].length - 3] ^= 0x10;
    writeFileSync(file, bytes.subarray(0, places[9].offset + places[9].length - 1));
    const reader = new RecordsInOrder(4096);
    await expect(reader.read(places[3], places[3].facts.recording)).resolves.toBeInstanceOf(Buffer);
    await expect(reader.read(places[4], places[4].facts.recording)).rejects.toThrow(/damaged after it was read/);
    await expect(reader.read(places[9], places[9].facts.recording)).rejects.toThrow(/damaged after it was read/);
    await reader.close();
  });
});
