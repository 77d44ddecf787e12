// The spike tests' two views of one single-channel fixture WAV: the spikes flag and features row of its reduction with the
// default spec, and the places the spike search finds fed chunk by chunk.
import { expect } from 'vitest';
import type { ChannelDeclaration } from '../spec/archive.js';
import { reduceRecording } from '../pipeline/reduce/compute.js';
import { FusedPass } from '../stages/fused/pass.js';
import { RobustOutliers } from '../stages/fused/robust-outliers.js';
import type { Flag } from '../stages/quality/flag.js';
import { SpikeBursts } from '../stages/quality/spike-bursts.js';
import { fixture, readAll } from './helpers.js';

/** Reduces `folder/name.wav` in chunks of `chunkFrames`, its one channel declared by `channel` over plain defaults. */
export async function spikesFlagOf(folder: string, name: string, channel: Partial<ChannelDeclaration>, chunkFrames: number) {
  const decl: ChannelDeclaration = { name: 'ch', quantity: 'acceleration', unit: 'm/s^2', scale: 1, offset: 0, range: null, bits: null, max_frequency_hz: null, ...channel };
  const r = await reduceRecording({ recording: name, path: fixture(folder, `${name}.wav`), group: 'g', format: null, sampleRate: null, layout: null, channels: [decl], labels: {}, durationS: null, spec: {}, chunkFrames });
  expect(r.reason).toBeUndefined();
  return { flag: r.quality[0].flags.find((f) => f.name === 'spikes') as Flag, row: r.rows[0] as Record<string, any> };
}

/** The spikes' first samples as the stage finds them (10 robust σ, the converter's step as the spread's floor), chunk by chunk. */
export async function spikePlaces(folder: string, name: string, channel: Partial<ChannelDeclaration>, chunk: number) {
  const { channels } = await readAll(fixture(folder, `${name}.wav`));
  const { scale, bits } = channel, step = scale! / 2 ** (bits! - 1);
  const x = Float64Array.from(channels[0], (v) => v * scale!);
  const found: number[] = [];
  const bursts = new SpikeBursts(undefined, undefined, undefined, (at) => found.push(at), 10, step);
  const pass = new FusedPass();
  const outliers = pass.joinOrMake(`robust-outliers:10:${step}`, () => new RobustOutliers(10, step, (at) => bursts.outlier(at)));
  for (let n0 = 0; n0 < x.length; n0 += chunk) {
    const part = x.slice(n0, n0 + chunk);
    pass.push(part);
    bursts.chunk(part, n0, outliers.median);
  }
  bursts.end();
  return found;
}
