// The spikes flag and features row of one single-channel fixture WAV reduced with the default spec, for the spike tests.
import { expect } from 'vitest';
import type { ChannelDeclaration } from '../spec/archive.js';
import { reduceRecording } from '../pipeline/reduce/compute.js';
import type { Flag } from '../stages/quality/flag.js';
import { fixture } from './helpers.js';

/** Reduces `folder/name.wav` in chunks of `chunkFrames`, its one channel declared by `channel` over plain defaults. */
export async function spikesFlagOf(folder: string, name: string, channel: Partial<ChannelDeclaration>, chunkFrames: number) {
  const decl: ChannelDeclaration = { name: 'ch', quantity: 'acceleration', unit: 'm/s^2', scale: 1, offset: 0, range: null, bits: null, max_frequency_hz: null, ...channel };
  const r = await reduceRecording({ recording: name, path: fixture(folder, `${name}.wav`), group: 'g', format: null, sampleRate: null, layout: null, channels: [decl], labels: {}, durationS: null, spec: {}, chunkFrames });
  expect(r.reason).toBeUndefined();
  return { flag: r.quality[0].flags.find((f) => f.name === 'spikes') as Flag, row: r.rows[0] as Record<string, any> };
}
