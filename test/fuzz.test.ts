// Damaged recordings through every reader: random truncations, byte flips, lying sizes and channel counts, NaN-filled CSV
// columns. Each input must either reduce or fail with a reason that says what is wrong (a RecordingError), within bounded
// time and memory. A fixed seed and case count run here; `npm run fuzz` runs more (QUERN_FUZZ_RUNS, QUERN_FUZZ_SEED).
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import type { RecordingJob } from '../pipeline/plan/plan.js';
import { computeRecording } from '../pipeline/reduce/compute.js';
import { openRecording } from '../stages/read/open.js';
import { RecordingError } from '../stages/read/recording.js';
import type { Hdf5Layout } from '../stages/read/hdf5.js';
import type { MatLayout } from '../stages/read/mat.js';
import type { RawLayout } from '../stages/read/raw.js';
import type { Format } from '../stages/read/recording.js';
import { fixture, tempDir } from './helpers.js';

const RUNS = Number(process.env.QUERN_FUZZ_RUNS ?? 250); // per seed file
const SEED = Number(process.env.QUERN_FUZZ_SEED ?? 20261203);
const RSS_LIMIT = 2 * 1024 ** 3;
/** Damaged copies between two reads of the good copy. */
const GOOD_EVERY = 10;

interface Seed { name: string; bytes: Buffer; format: Format; sampleRate?: number; layout?: RawLayout; hdf5?: Hdf5Layout; mat?: MatLayout }
const file = (...p: string[]) => readFileSync(fixture(...p));
const mat = (variables: string[], l: Partial<MatLayout> = {}): MatLayout => ({ variables, channel_axis: null, sample_rate_variable: null, start_time_variable: null, ...l });
const h5 = (datasets: string[], l: Partial<Hdf5Layout> = {}): Hdf5Layout => ({ datasets, channel_axis: null, sample_rate_attribute: null, start_time_attribute: null, ...l });

// An invented two-channel CSV export with a time column.
const CSV = Buffer.from(['time,acc,strain', ...Array.from({ length: 300 }, (_, i) => `${(i / 1000).toFixed(3)},${Math.sin(i / 5).toFixed(4)},${(i % 17) - 8}`)].join('\n') + '\n');

const SEEDS: Seed[] = [
  { name: 'pcm16.wav', bytes: file('wav', 'pcm16-2ch.wav'), format: 'wav' },
  { name: 'extensible-24.wav', bytes: file('wav', 'pcm24-3ch.wav'), format: 'wav' },
  { name: 'pcm12in16.wav', bytes: file('formats', 'pcm12in16.wav'), format: 'wav' },
  { name: 'pcm56in56.wav', bytes: file('formats', 'pcm56in56.wav'), format: 'wav' },
  { name: 'rifx.wav', bytes: file('formats', 'rifx-pcm24.wav'), format: 'wav' },
  { name: 'rf64.wav', bytes: file('formats', 'sf-rf64-pcm16.wav'), format: 'wav' },
  { name: 'bw64.wav', bytes: file('formats', 'bw64-pcm24.wav'), format: 'wav' },
  { name: 'alaw.wav', bytes: file('formats', 'sox-alaw.wav'), format: 'wav' },
  { name: 'bext.wav', bytes: file('wav', 'struct-chunks.wav'), format: 'wav' },
  { name: 'stereo.flac', bytes: file('formats', 'flac16-2ch.flac'), format: 'flac' },
  { name: 'lpc24.flac', bytes: file('formats', 'flac24-3ch.flac'), format: 'flac' },
  { name: 'eight.flac', bytes: file('formats', 'flac16-8ch.flac'), format: 'flac' },
  { name: 'rows.h5', bytes: file('formats', 'acq-rows.h5'), format: 'hdf5', hdf5: h5(['/acq/signals'], { channel_axis: 1, sample_rate_attribute: 'sample_rate', start_time_attribute: 'start_time' }) },
  { name: 'columns.h5', bytes: file('formats', 'acq-columns.h5'), format: 'hdf5', hdf5: h5(['/data'], { channel_axis: 0, sample_rate_attribute: 'fs' }) },
  { name: 'timed.h5', bytes: file('mat', 'dropout-73.mat'), format: 'hdf5', hdf5: h5(['/x'], { channel_axis: 0, time_dataset: '/t' }) },
  { name: 'per-channel.h5', bytes: file('formats', 'per-channel.h5'), format: 'hdf5', sampleRate: 1000, hdf5: h5(['/ch/a', '/ch/b', '/ch/c']) },
  { name: 'columns.mat', bytes: file('mat', 'rig-columns.mat'), format: 'mat', mat: mat(['data'], { channel_axis: 1, sample_rate_variable: 'fs', start_time_variable: 't0' }) },
  { name: 'rows.mat', bytes: file('mat', 'rig-rows.mat'), format: 'mat', mat: mat(['signals'], { channel_axis: 0, sample_rate_variable: 'rate', start_time_variable: 'start' }) },
  { name: 'struct.mat', bytes: file('mat', 'per-channel.mat'), format: 'mat', mat: mat(['rec.acc_x', 'rec.acc_y'], { sample_rate_variable: 'rec.fs' }) },
  { name: 'columns-73.mat', bytes: file('mat', 'rig-columns-73.mat'), format: 'mat', mat: mat(['data'], { channel_axis: 1, sample_rate_variable: 'fs', start_time_variable: 't0' }) },
  { name: 'dropout.mat', bytes: file('mat', 'dropout.mat'), format: 'mat', mat: mat(['x'], { channel_axis: 1, time_variable: 't' }) },
  { name: 'named.mat', bytes: file('mat', 'named-channels.mat'), format: 'mat', mat: mat(['data'], { channel_axis: 1, sample_rate_variable: 'fs', channel_names_variable: 'names' }) },
  { name: 'named-73.mat', bytes: file('mat', 'named-channels-73.mat'), format: 'mat', mat: mat(['data'], { channel_axis: 1, sample_rate_variable: 'fs', channel_names_variable: 'names' }) },
  { name: 'level4.mat', bytes: file('mat', 'level4.mat'), format: 'mat', mat: mat(['data'], { channel_axis: 1, sample_rate_variable: 'fs', start_time_variable: 't0', channel_names_variable: 'names' }) },
  { name: 'level4-be.mat', bytes: file('mat', 'level4-big-endian.mat'), format: 'mat', mat: mat(['x'], { channel_axis: 1, sample_rate_variable: 'fs' }) },
  { name: 'big-endian.mat', bytes: file('mat', 'narrow-big-endian.mat'), format: 'mat', mat: mat(['sig'], { channel_axis: 1, sample_rate_variable: 'fs' }) },
  { name: 'export.csv', bytes: CSV, format: 'csv' },
  { name: 'frames.bin', bytes: file('raw', 'be-int16-3ch.bin'), format: 'raw', sampleRate: 100, layout: { sample_type: 'int16', byte_order: 'big', channels: 3, header_bytes: 16 } },
];

type Mutation =
  | { kind: 'truncate'; at: number }
  | { kind: 'flip'; at: number; mask: number }
  | { kind: 'size'; at: number; value: number; little: boolean }
  | { kind: 'channels'; value: number }
  | { kind: 'nan-column'; column: number; text: string }
  | { kind: 'wide-header'; columns: number };

const SIZES = fc.oneof(fc.constantFrom(0, 1, 0x7fffffff, 0xffffffff, 0xfffffffe, 0x10000), fc.nat({ max: 0xffffffff }));
const mutation: fc.Arbitrary<Mutation> = fc.oneof(
  fc.record({ kind: fc.constant('truncate' as const), at: fc.double({ min: 0, max: 1, noNaN: true }) }),
  fc.record({ kind: fc.constant('flip' as const), at: fc.double({ min: 0, max: 1, noNaN: true }), mask: fc.integer({ min: 1, max: 255 }) }),
  // Header fields and chunk sizes live near the start: lying sizes are written into the first 512 bytes.
  fc.record({ kind: fc.constant('size' as const), at: fc.nat({ max: 508 }), value: SIZES, little: fc.boolean() }),
  fc.record({ kind: fc.constant('channels' as const), value: fc.oneof(fc.constantFrom(0, 255, 4097, 65535), fc.nat({ max: 65535 })) }),
  fc.record({ kind: fc.constant('nan-column' as const), column: fc.nat({ max: 2 }), text: fc.constantFrom('NaN', 'nan', '', 'inf', '-Infinity', 'x') }),
  fc.record({ kind: fc.constant('wide-header' as const), columns: fc.constantFrom(5000, 100000) }),
);

/** Applies a mutation the way damage happens: a cut, a flipped bit, a header field that lies. */
function damage(seed: Seed, b: Buffer, m: Mutation): Buffer {
  const out = Buffer.from(b);
  switch (m.kind) {
    case 'truncate': return out.subarray(0, Math.floor(m.at * out.length));
    case 'flip': if (out.length) out[Math.min(out.length - 1, Math.floor(m.at * out.length))] ^= m.mask; return out;
    case 'size': if (m.at + 4 <= out.length) (m.little ? out.writeUInt32LE(m.value, m.at) : out.writeUInt32BE(m.value, m.at)); return out;
    case 'channels': {
      // Where each format keeps its channel count: WAV fmt chunk +2, FLAC STREAMINFO byte 12 (3 bits), CSV header, raw layout.
      const fmt = out.indexOf('fmt ');
      if (seed.format === 'wav' && fmt >= 0 && fmt + 12 <= out.length) (seed.bytes[0] === 0x52 && seed.bytes[3] === 0x58 ? out.writeUInt16BE(m.value, fmt + 10) : out.writeUInt16LE(m.value, fmt + 10));
      if (seed.format === 'flac' && out.length > 20) out[20] = (out[20] & 0xf1) | ((m.value & 7) << 1);
      return out;
    }
    case 'nan-column': {
      if (seed.format !== 'csv') return out;
      const lines = out.toString('utf8').split('\n');
      return Buffer.from(lines.map((l, i) => { if (i === 0 || !l) return l; const c = l.split(','); c[m.column] = m.text; return c.join(','); }).join('\n'));
    }
    case 'wide-header': {
      if (seed.format !== 'csv') return out;
      const rest = out.toString('utf8').split('\n').slice(1).join('\n');
      return Buffer.from(['time', ...Array.from({ length: m.columns }, (_, i) => `c${i}`)].join(',') + '\n' + rest);
    }
  }
}

const job = (seed: Seed, path: string): RecordingJob => ({
  recording: seed.name, path, group: 'fuzz', format: seed.format, sampleRate: seed.sampleRate ?? null, layout: seed.layout ?? null,
  reader: { hdf5: seed.hdf5 ?? null, mat: seed.mat ?? null, flac: null }, channels: null, labels: {}, durationS: null, spec: {}, chunkFrames: 4096,
});

/** Reads every sample through the reader: 'read' and a sum over the samples, or the RecordingError's reason; anything else is thrown on. */
async function readThrough(j: RecordingJob): Promise<string> {
  let rec;
  try {
    rec = await openRecording(j.path, { format: j.format, sampleRate: j.sampleRate, layout: j.layout, ...j.reader, chunkFrames: j.chunkFrames });
    let sum = 0, n = 0;
    for await (const chunk of rec.chunks()) {
      if (chunk.length !== rec.channelCount) throw new Error('a chunk without every channel');
      for (const c of chunk) for (let i = 0; i < c.length; i++) { sum += (i + 1) * c[i]; n++; }
    }
    return `read ${n} samples, sum ${sum}`;
  } catch (e) {
    if (e instanceof RecordingError) return e.message;
    throw e;
  } finally {
    await rec?.close();
  }
}

describe(`every reader survives damaged files (fast-check, seed ${SEED}, ${RUNS} cases a seed file)`, () => {
  const dir = tempDir('quern-fuzz-');
  it.each(SEEDS.map((s) => [s.name, s] as const))('%s: each damaged copy reduces or fails with a reason, and leaves the reader able to read a good copy', async (_, seed) => {
    const path = join(dir, `case-${seed.name}`), good = join(dir, `good-${seed.name}`);
    // The undamaged file reduces: the fuzzing starts from a good recording.
    writeFileSync(path, seed.bytes);
    writeFileSync(good, seed.bytes);
    const clean = await computeRecording(job(seed, path));
    expect(clean.reason ?? 'reduced').toBe('reduced');
    // What a damaged file leaves behind (a library's memory it corrupted, a buffer it left dirty) must not reach the next file.
    const goodSamples = await readThrough(job(seed, good));
    expect(goodSamples).toMatch(/^read /);
    const outcomes = { read: 0, failed: 0 };
    await fc.assert(
      fc.asyncProperty(fc.array(mutation, { minLength: 1, maxLength: 3 }), async (mutations) => {
        writeFileSync(path, mutations.reduce((b, m) => damage(seed, b, m), seed.bytes));
        const started = performance.now();
        // A failure is a reason the reader gave (RecordingError), never an exception it did not expect.
        const outcome = await readThrough(job(seed, path));
        outcomes[outcome.startsWith('read ') ? 'read' : 'failed']++;
        expect(outcome.length).toBeGreaterThan(0);
        expect(performance.now() - started).toBeLessThan(10_000);
        expect(process.memoryUsage().rss).toBeLessThan(RSS_LIMIT);
        if ((outcomes.read + outcomes.failed) % GOOD_EVERY === 0) expect(await readThrough(job(seed, good))).toBe(goodSamples);
      }),
      { seed: SEED + seed.name.length, numRuns: RUNS, endOnFailure: true },
    );
    expect(outcomes.read + outcomes.failed).toBe(RUNS);
    expect(await readThrough(job(seed, good))).toBe(goodSamples);
  }, Math.max(120_000, RUNS * 30));

  it('CSV columns full of NaN, empty cells or text reduce, counted as missing samples', async () => {
    const path = join(dir, 'nan.csv');
    await fc.assert(
      fc.asyncProperty(fc.array(fc.record({ kind: fc.constant('nan-column' as const), column: fc.nat({ max: 2 }), text: fc.constantFrom('NaN', 'nan', '', 'inf', 'x') }), { minLength: 1, maxLength: 3 }), async (mutations) => {
        const seed = SEEDS.find((s) => s.format === 'csv')!;
        writeFileSync(path, mutations.reduce((b, m) => damage(seed, b, m), seed.bytes));
        const out = await computeRecording(job(seed, path));
        expect(out.reason ?? 'reduced').not.toMatch(/^unexpected error/);
      }),
      { seed: SEED, numRuns: Math.max(10, Math.round(RUNS / 10)) },
    );
  });
});
