// One stored entry as bytes: written in ASCII alone (other characters as JSON's \u escapes, RFC 8259 section 7), read
// back the same, and records written in UTF-8 before still read.
import { deflateRawSync, inflateRawSync } from 'node:zlib';
import { describe, expect, it } from 'vitest';
import { unpackSpectrum } from '../stages/spectra.js';
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

  it('keeps float32 arrays as raw bytes after the deflated JSON, and reads them back exactly, wherever they lie', () => {
    const u = (seed: number) => Float32Array.from({ length: 257 + seed }, (_, i) => Math.fround(Math.sin(i * seed) * 10 ** (seed % 7 - 3)));
    const kept = { spectrum: [{ df: 6.25, segments: 5, density: u(1) }, null, { df: 6.25, segments: 5, density: u(2).subarray(3, 200) }] };
    const withArrays = { ...results, groups: { spectrum: { columns: [{}, {}], flags: [], notes: [], kept }, quality: { columns: [], evidence: [{ data: { trend: { window_s: 0.1, rms: u(3) }, empty: new Float32Array(0) } }] } } } as unknown as EntryResults;
    const body = recordBody(encodeRecord(facts, withArrays));
    // A first byte no raw deflate stream starts with (block type 3, RFC 1951 section 3.2.3), then the JSON's length.
    expect(body[0]).toBe(0xff);
    const json = inflateRawSync(body.subarray(5, 5 + body.readUInt32LE(1))).toString('latin1');
    expect(json).toContain('{"$f32":[0,258]}');
    expect(body.length - 5 - body.readUInt32LE(1)).toBe(4 * (258 + 197 + 260));
    const back = decodeResults(body) as any;
    expect(back).toEqual(withArrays);
    expect(back.groups.spectrum.kept.spectrum[2].density).toBeInstanceOf(Float32Array);
    expect([...back.groups.spectrum.kept.spectrum[2].density]).toEqual([...u(2).subarray(3, 200)]);
  });

  it('without float32 arrays, is deflated JSON alone, as records were before them', () => {
    const body = recordBody(encodeRecord(facts, results));
    expect(JSON.parse(inflateRawSync(body).toString('latin1'))).toEqual(JSON.parse(JSON.stringify(results)));
  });

  it('refuses results that name float32 values beyond those stored', () => {
    const body = Buffer.from(recordBody(encodeRecord(facts, { ...results, groups: { a: { kept: { x: [{ v: new Float32Array(4) }] } } } } as unknown as EntryResults)));
    expect(() => decodeResults(body.subarray(0, body.length - 4))).toThrow(/float32 values 0…4 of 3/);
  });

  it('kept spectra stored as base64 text (before raw arrays) still read', () => {
    const density = Float32Array.from([1.5, 2.25, 1e-7]);
    const old = { df: 2, segments: 3, density: Buffer.from(density.buffer).toString('base64') };
    expect(unpackSpectrum(old)).toEqual({ df: 2, segments: 3, density });
  });

  it('written in UTF-8 (before records were ASCII) still reads back the same', () => {
    expect(decodeResults(deflateRawSync(Buffer.from(JSON.stringify(results), 'utf8')))).toEqual(results);
  });
});
