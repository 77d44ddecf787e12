// One stored entry as bytes: written in ASCII alone (other characters as JSON's \u escapes, RFC 8259 section 7), read
// back the same, and records written in UTF-8 before still read.
import { deflateRawSync, inflateRawSync } from 'node:zlib';
import { describe, expect, it } from 'vitest';
import { decodeResults, encodeRecord, HEADER_BYTES, recordBody, recordFacts, type EntryFacts, type EntryResults } from '../pipeline/store/record.js';

// Invented: a microphone channel in pascals beside an accelerometer in m/s², with a note that has a dash and an ellipsis.
const facts = { recording: 'bay-3/night – 2.wav', group: 'rig', status: 'reduced', version: '0', identity: { size: 1, mtimeMs: 2, hash: null }, readAtMs: 3, declKey: 'k', groupKeys: {}, seconds: 0.5, frames: 10, sampleRate: 1000, startTime: null, channels: 2, notes: { '': ['sampled at 1 kHz… µ-law'] }, storedAt: 4 } as EntryFacts;
const results = { recording: facts.recording, group: 'rig', status: 'reduced', base: { frames: 10, sampleRate: 1000, header: { format: 'wav', encoding: 'pcm', bits: 16, start_time: null }, channels: [{ name: 'acc', quantity: 'acceleration', unit: 'm/s²' }, { name: 'mic', quantity: 'sound_pressure', unit: 'Pa' }], notes: ['😀 ½'] }, groups: {} } as unknown as EntryResults;

describe('a stored record', () => {
  it('is ASCII throughout and reads back the same facts and results', () => {
    const record = encodeRecord(facts, results);
    const meta = Buffer.from(record).subarray(HEADER_BYTES, HEADER_BYTES + Buffer.from(record).readUInt32LE(4));
    expect([...meta].every((b) => b < 128)).toBe(true);
    expect([...inflateRawSync(recordBody(record))].every((b) => b < 128)).toBe(true);
    expect(recordFacts(record)).toEqual(facts);
    expect(decodeResults(recordBody(record))).toEqual(results);
  });

  it('written in UTF-8 (before records were ASCII) still reads back the same', () => {
    expect(decodeResults(deflateRawSync(Buffer.from(JSON.stringify(results), 'utf8')))).toEqual(results);
  });
});
