// A clean archive reads clean: band-limited signals sampled at 2.56 × their declared highest frequency (common practice in
// vibration analysers) and at 5 ×, with no defect planted, raise no warning and no failure on any channel.
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { encodeWav } from '../scripts/wav-file.js';
import { quern, readJson, tempDir } from './helpers.js';

const HIGHEST_HZ = 2000;

/** Seeded uniform generator (mulberry32). */
function uniform(seed: number) {
  let a = seed >>> 0;
  return () => { a = (a + 0x6d2b79f5) >>> 0; let t = Math.imul(a ^ (a >>> 15), a | 1); t ^= t + Math.imul(t ^ (t >>> 7), t | 61); return ((t ^ (t >>> 14)) >>> 0) / 4294967296; };
}

/** Noise with content only below `top` Hz: many tones at random frequencies and phases, Rayleigh amplitudes (near-Gaussian), RMS σ. */
function bandLimitedNoise(fs: number, n: number, top: number, sigma: number, seed: number): Float64Array {
  const u = uniform(seed), tones = 80;
  const parts = Array.from({ length: tones }, () => ({ f: 5 + u() * (top - 5), p: 2 * Math.PI * u(), a: Math.sqrt(-2 * Math.log(1 - u())) }));
  const norm = sigma / Math.sqrt(parts.reduce((s, c) => s + c.a * c.a / 2, 0));
  return Float64Array.from({ length: n }, (_, i) => norm * parts.reduce((s, c) => s + c.a * Math.sin(2 * Math.PI * c.f * i / fs + c.p), 0));
}

const tone = (fs: number, n: number, f: number, a: number, p = 0) => Float64Array.from({ length: n }, (_, i) => a * Math.sin(2 * Math.PI * f * i / fs + p));
const sum = (...xs: Float64Array[]) => xs[0].map((_, i) => xs.reduce((s, x) => s + x[i], 0));

const CHANNELS = [
  // name, quantity, unit, scale, offset
  ['acc', 'acceleration', 'm/s^2', 100, 0],
  ['mic', 'sound_pressure', 'Pa', 50, 0],
  ['pressure', 'pressure', 'bar', 10, 10],
  ['strain', 'strain', 'µm/m', 1000, 0],
] as const;

function signals(fs: number, seconds: number, seed: number): Float64Array[] {
  const n = Math.round(fs * seconds);
  return [
    sum(tone(fs, n, 29.5, 6, 0.3), tone(fs, n, 0.61 * HIGHEST_HZ, 2), bandLimitedNoise(fs, n, HIGHEST_HZ, 2.5, seed)),
    sum(tone(fs, n, 177, 3), bandLimitedNoise(fs, n, HIGHEST_HZ, 1.5, seed + 1)),
    sum(new Float64Array(n).fill(6.5), tone(fs, n, 177, 0.2), bandLimitedNoise(fs, n, HIGHEST_HZ, 0.1, seed + 2)),
    sum(tone(fs, n, 0.5, 120), tone(fs, n, 29.5, 40), bandLimitedNoise(fs, n, HIGHEST_HZ, 15, seed + 3)),
  ];
}

function makeCleanArchive(root: string): void {
  const groups: string[] = [];
  for (const [name, ratio] of [['at-2p56', 2.56], ['at-5', 5]] as const) {
    const fs = ratio * HIGHEST_HZ;
    for (let night = 0; night < 2; night++) {
      const x = signals(fs, 8, 100 * night + (ratio === 5 ? 7 : 1));
      mkdirSync(join(root, name), { recursive: true });
      writeFileSync(join(root, name, `night-${night + 1}.wav`), encodeWav({
        sampleRate: fs, origination: new Date(Date.UTC(2026, 0, 10 + night, 2)), channels: x.map((v, c) => v.map((s) => (s - CHANNELS[c][4]) / CHANNELS[c][3])),
      }));
    }
    groups.push(`  - name: ${name}\n    match: "${name}/*.wav"\n    sample_rate: ${fs}\n    channels:\n${CHANNELS.map(([ch, q, unit, scale, offset]) =>
      `      - { name: ${ch}, quantity: ${q}, unit: "${unit}", scale: ${scale}, offset: ${offset}, range: [${offset - scale}, ${offset + scale}], bits: 16, max_frequency_hz: ${HIGHEST_HZ} }`).join('\n')}`);
  }
  writeFileSync(join(root, 'archive.yaml'), `groups:\n${groups.join('\n')}\n`);
}

describe('a clean archive sampled at 2.56 × and at 5 × its declared highest frequency', () => {
  let quality: any;
  beforeAll(() => {
    const root = join(tempDir(), 'clean');
    makeCleanArchive(root);
    const r = quern('reduce', root, '--out', join(root, '..', 'out'), '--quiet');
    expect(r.code, r.stderr).toBe(0);
    quality = readJson(join(root, '..', 'out', 'quality.json'));
  });

  it('has no channel at warn or fail', () => {
    const flagged = quality.recordings.flatMap((r: any) => r.channels.flatMap((c: any) => c.flags.filter((f: any) => f.severity === 'warn' || f.severity === 'fail').map((f: any) => `${r.recording} ${c.channel} ${f.name}: ${f.message}`)));
    expect(flagged).toEqual([]);
    expect(quality.totals.channels.warn + quality.totals.channels.fail).toBe(0);
    expect(quality.totals.channels.ok + quality.totals.channels.note).toBe(16);
  });
});
