// Spikes: bursts of 1 to 3 samples standing out from their neighbours on both sides, against the places and counts numpy
// planted; an impact hammer's ring-down is none. Recordings and references: test/fixtures/make-peak-spike-vectors.py.
import { describe, expect, it } from 'vitest';
import type { ChannelDeclaration } from '../spec/archive.js';
import { WIDEST_SPIKE } from '../stages/quality/spike-bursts.js';
import { fixture, readJson } from './helpers.js';
import { spikePlaces, spikesFlagOf } from './spikes-flag.js';

const ref = readJson(fixture('peak-spike-vectors.json'));
type SpikeCase = { channel: Partial<ChannelDeclaration>; places: number[]; spikes: number; samples: number };
const cases = ref.spikes as Record<string, SpikeCase>;
const fs = ref.fs as number;

const spikesFlag = (name: string, chunkFrames: number) => spikesFlagOf('peaks', name, cases[name].channel, chunkFrames);

const places = (name: string, chunk: number) => spikePlaces('peaks', name, cases[name].channel, chunk);

describe('spike bursts against numpy\'s planted places', () => {
  for (const name of ['glitches_1_sample_16', 'glitches_2_samples_16', 'glitches_3_samples_16']) {
    it(`${name}: every planted burst found at its place, and nothing else, whatever the chunks`, async () => {
      const c = cases[name];
      for (const chunk of [65536, 4096, 1000]) expect(await places(name, chunk)).toEqual(c.places);
      for (const chunk of [65536, 1000]) {
        const { flag, row } = await spikesFlag(name, chunk);
        expect(flag.severity).toBe(c.samples / ref.samples >= 1e-3 ? 'fail' : 'warn'); // the default fail_fraction, 0.1 % of samples
        expect(flag.evidence.spikes).toBe(c.spikes);
        expect(flag.evidence.samples).toBe(c.samples);
        expect(row.spike_count).toBe(c.samples);
        expect(flag.evidence.first_s).toBeCloseTo(c.places[0] / fs, 12);
      }
    });
  }

  it(`bursts of 4 samples, wider than the default ${WIDEST_SPIKE}, are no spikes`, async () => {
    expect(cases.bursts_4_samples_16.places.length).toBe(20);
    expect(await places('bursts_4_samples_16', 4096)).toEqual([]);
    expect((await spikesFlag('bursts_4_samples_16', 4096)).flag.severity).toBe('ok');
  });

  it('an impact hammer\'s decaying response (three modes, scipy.signal.bilinear and lfilter) is no spike: its neighbours ring near its level', async () => {
    for (const chunk of [65536, 4096, 1000]) {
      const { flag } = await spikesFlag('hammer_response_24', chunk);
      expect(flag.value).toBe(0);
      expect(flag.severity).toBe('ok');
    }
  });
});
