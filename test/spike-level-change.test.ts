// Spikes on clean sources whose level rises or steps within a recording: an ordinary crest of the loud part passes the
// recording's robust threshold, set by its quiet part, but is no spike; one sample far beyond its surroundings still is.
// Recordings and references (numpy's count of the bursts a recording-wide threshold passes, each burst over the RMS of the
// 0.1 s around it, and the planted sample's place): test/fixtures/make-level-change-vectors.py.
import { describe, expect, it } from 'vitest';
import type { ChannelDeclaration } from '../spec/archive.js';
import { fixture, readJson } from './helpers.js';
import { spikePlaces, spikesFlagOf } from './spikes-flag.js';

const ref = readJson(fixture('level-change-vectors.json'));
type LevelCase = { channel: Partial<ChannelDeclaration>; recording_wide_spikes: number; local_ratios: number[]; spikes: number[]; planted_s?: number };
const cases = ref.cases as Record<string, LevelCase>;
const fs = ref.fs as number;

const spikesFlag = (name: string, chunkFrames: number) => spikesFlagOf('level-change', name, cases[name].channel, chunkFrames);

const places = (name: string, chunk: number) => spikePlaces('level-change', name, cases[name].channel, chunk);

describe('spikes on a level that rises or steps (numpy, scipy.signal.butter noise)', () => {
  it('the Gaussian tail makes a sample beyond 10 σ of its surroundings a spike, not chance (erfc(10/√2), common practice)', () => {
    // scipy.special.erfc(10/sqrt 2) = 1.52e-23 a sample; 4 s at 12.8 kHz of Gaussian noise expects 8e-19 such samples.
    expect(ref.gaussian_beyond_10_sigma).toBeGreaterThan(1.5e-23);
    expect(ref.gaussian_beyond_10_sigma).toBeLessThan(1.55e-23);
  });

  for (const name of ['fan_rise_mic', 'runup_acc', 'loadstep_acc']) {
    it(`${name}: clean, no spike, though a recording-wide threshold passes some of its crests`, async () => {
      const c = cases[name];
      // numpy: the rule against the whole recording's spread passes these bursts, each under 5 times the RMS of its 0.1 s.
      expect(c.recording_wide_spikes).toBeGreaterThan(3);
      expect(Math.max(...c.local_ratios)).toBeLessThan(5);
      expect(c.spikes).toEqual([]);
      for (const chunk of [65536, 4096, 1000, 200]) expect(await places(name, chunk)).toEqual([]);
      for (const chunk of [65536, 1000]) {
        const { flag, row } = await spikesFlag(name, chunk);
        expect(flag.severity).toBe('ok');
        expect(flag.message).toBe('no spikes');
        expect(row.spike_count).toBe(0);
      }
    });
  }

  it('one sample raised to 15 times the RMS of its 0.1 s in the loud part of the rising level is a spike at numpy\'s place', async () => {
    const c = cases.fan_rise_mic_spike;
    expect(c.spikes.length).toBe(1);
    expect(c.planted_s).toBeGreaterThan(3.5);
    for (const chunk of [65536, 4096, 1000, 200]) expect(await places('fan_rise_mic_spike', chunk)).toEqual(c.spikes);
    for (const chunk of [65536, 1000]) {
      const { flag, row } = await spikesFlag('fan_rise_mic_spike', chunk);
      expect(flag.severity).toBe('warn');
      expect(flag.evidence.spikes).toBe(1);
      expect(row.spike_count).toBe(1);
      expect(flag.evidence.first_s).toBeCloseTo(c.planted_s!, 12);
      expect(flag.evidence.first_s).toBeCloseTo(c.spikes[0] / fs, 12);
    }
  });
});
