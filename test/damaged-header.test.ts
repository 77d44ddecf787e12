// A stored entry damaged near its start (its header or its facts): the recording it held is told by whichever part still
// matches its SHA-256, and recomputed saying so; when neither part can be trusted, run.json says that plainly.
import { cpSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { scanPack, type Located } from '../pipeline/store/pack.js';
import { HEADER_BYTES } from '../pipeline/store/record.js';
import { quern, readJson, sampleArchiveCopy } from './helpers.js';

async function records(pack: string): Promise<Located[]> {
  const found: Located[] = [];
  await scanPack(pack, (r) => found.push(r));
  return found;
}

describe('an entry damaged in its header or facts', () => {
  it('names its recording when a part still matches its checksum, and says "stored entry damaged"', async () => {
    const archive = sampleArchiveCopy(), base = join(archive, '..', 'base');
    quern('reduce', archive, '--out', base, '--quiet');
    const all = await records(join(base, 'cache', 'entries.pack'));
    const victim = all[Math.floor(all.length / 2)];
    const recording = victim.facts.recording;
    // Where the byte lies (record.ts: magic, facts length, results length, facts SHA-256, results SHA-256, facts) and what reading finds.
    const cases: [string, number[], string][] = [
      ['magic', [0], 'not the start of a record (damaged bytes)'],
      ['facts length', [5], 'checksum mismatch in the entry\'s facts'],
      ['facts checksum', [20], 'checksum mismatch in the entry\'s facts'],
      ['results checksum', [50], 'checksum mismatch in the entry\'s results'],
      ['facts text', [HEADER_BYTES + 3], 'checksum mismatch in the entry\'s facts'],
    ];
    for (const [where, at, problem] of cases) {
      const out = join(archive, '..', `out-${where.replace(' ', '-')}`), pack = join(out, 'cache', 'entries.pack');
      cpSync(base, out, { recursive: true });
      const bytes = readFileSync(pack);
      for (const k of at) bytes[victim.offset + k] ^= 0x10;
      writeFileSync(pack, bytes);
      quern('reduce', archive, '--out', out, '--quiet');
      const run = readJson(join(out, 'run.json'));
      expect([where, run.store.damaged]).toEqual([where, [{ file: pack, offset: victim.offset, bytes: victim.length, recording, problem }]]);
      const line = run.recordings.find((x: any) => x.recording === recording);
      expect([where, line.why]).toEqual([where, `stored entry damaged (${problem}); recomputed`]);
      expect(run.recordings.filter((x: any) => x.recomputed.length > 0).map((x: any) => x.recording)).toEqual([recording]);
    }
  }, 120_000);

  it('says plainly when neither part can be trusted, rather than "new recording"', async () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out'), pack = join(out, 'cache', 'entries.pack');
    quern('reduce', archive, '--out', out, '--quiet');
    const all = await records(pack);
    const victim = all[Math.floor(all.length / 2)];
    const bytes = readFileSync(pack);
    bytes[victim.offset + 20] ^= 0x10; // the facts' checksum
    bytes[victim.offset + 50] ^= 0x10; // and the results'
    writeFileSync(pack, bytes);
    quern('reduce', archive, '--out', out, '--quiet');
    const run = readJson(join(out, 'run.json'));
    expect(run.store.damaged).toEqual([{ file: pack, offset: victim.offset, bytes: victim.length, recording: null, problem: 'checksum mismatch in the entry\'s facts' }]);
    const line = run.recordings.find((x: any) => x.recording === victim.facts.recording);
    expect(line.why).toBe('new recording, or its stored entry was damaged past telling whose (checksum mismatch in the entry\'s facts); computed');
    expect(run.counts.recomputed).toBe(1);
  }, 60_000);
});
