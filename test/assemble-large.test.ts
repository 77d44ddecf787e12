// A recording's secondary tables can be long: cycles.parquet holds up to 65,536 rows a channel, and a recording has many
// channels. Assembling them must not depend on how many arguments one call takes.
import { describe, expect, it } from 'vitest';
import { assembleRecording } from '../pipeline/reduce/assemble.js';
import type { RecordingOutput } from '../pipeline/reduce/result.js';

describe('assembling a recording', () => {
  it('keeps every row of a table of 600,000 rows, in order', () => {
    const rows = Array.from({ length: 600_000 }, (_, i) => ({ range: i, mean: 0, count: 1 }));
    const o: RecordingOutput = {
      recording: 'long.wav', group: 'rig', status: 'reduced', seconds: 1, groups: {
        rainflow: { columns: [{}], flags: [[]], evidence: [null], tables: { cycles: rows }, notes: [] },
      },
      base: { frames: 8_000_000, sampleRate: 1000, header: { format: 'wav', encoding: 'float32', bits: null, start_time: null }, channels: [{ name: 'sg', quantity: 'strain', unit: 'µm/m' }], notes: [] },
    } as never;
    const r = assembleRecording(o, {}, { rainflow: {} });
    expect(r.tables.cycles.length).toBe(600_000);
    expect(r.tables.cycles[599_999]).toMatchObject({ range: 599_999 });
  });
});
