// Reduces a signal through the real per-recording path: a float WAV on disk → reduceRecording, as the pipeline would.
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { expect } from 'vitest';
import type { ChannelDeclaration } from '../spec/archive.js';
import type { ReductionSpec } from '../spec/reduction.js';
import { reduceRecording } from '../pipeline/reduce/compute.js';
import { encodeWav } from '../scripts/wav-file.js';
import { tempDir } from './helpers.js';

export const channel = (over: Partial<ChannelDeclaration> = {}): ChannelDeclaration => ({ name: 'x', quantity: 'acceleration', unit: 'm/s^2', scale: 100, offset: 0, range: null, bits: null, max_frequency_hz: null, ...over });

/** Reduces one signal (engineering units, |x| < the declaration's scale) held in a float32 WAV. */
export async function reduce(signal: Float64Array, fs: number, spec: ReductionSpec, decl = channel()) {
  const path = join(tempDir(), 'x.wav');
  writeFileSync(path, encodeWav({ sampleRate: fs, channels: [signal.map((v) => v / decl.scale)], encoding: 'float32' }));
  const r = await reduceRecording({ recording: 'x.wav', path, group: 'g', format: null, sampleRate: null, layout: null, channels: [decl], labels: {}, durationS: null, spec, chunkFrames: 8191 });
  expect(r.reason).toBeUndefined();
  return { row: r.rows[0] as Record<string, number>, result: r };
}

/** Reduces several channels (engineering units) held in one float32 WAV; `row` finds a channel's features. */
export async function reduceChannels(signals: Float64Array[], decls: ChannelDeclaration[], fs: number, spec: ReductionSpec) {
  const path = join(tempDir(), 'x.wav');
  writeFileSync(path, encodeWav({ sampleRate: fs, channels: signals.map((x, c) => x.map((v) => v / decls[c].scale)), encoding: 'float32' }));
  const r = await reduceRecording({ recording: 'x.wav', path, group: 'g', format: null, sampleRate: null, layout: null, channels: decls, labels: {}, durationS: null, spec, chunkFrames: 8191 });
  expect(r.reason).toBeUndefined();
  return { result: r, row: (name: string) => r.rows.find((x) => x.channel === name) as Record<string, number | null> };
}

export const sine = (n: number, fs: number, f: number, a: number, phase = 0) => Float64Array.from({ length: n }, (_, i) => a * Math.sin(2 * Math.PI * f * i / fs + phase));
