// Stored results are reused only under the same tool version (pipeline/plan/reuse.ts), so a change that moves a figure or a
// verdict must raise package.json's version: then every lab's stored results are computed again, and tables never mix
// figures of two methods. This holds the sample archive's figures to the digest recorded with the version (a change
// detector of the project's own, not a check of correctness: the other tests check the numbers against outside references).
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { flagLines, plainValue, rowLines, sampleArchiveDigest } from '../scripts/figures-fingerprint.js';
import { readJson, repo } from './helpers.js';

describe('the figures and the tool version', () => {
  it('the sample archive gives the figures recorded under this version; changed figures need a new version', async () => {
    const version: string = JSON.parse(readFileSync(join(repo, 'package.json'), 'utf8')).version;
    const recorded = readJson(join(repo, 'test', 'fixtures', 'figures-fingerprint.json'));
    const { digest, lines } = await sampleArchiveDigest(repo);
    expect(lines).toBeGreaterThan(1000);
    expect(recorded.version, 'the version was raised: run `npm run fingerprint` to record its figures').toBe(version);
    expect(digest, `the sample archive's figures or verdicts changed under version ${version}: raise package.json's version (stored results from the old one are then computed again), then run \`npm run fingerprint\``).toBe(recorded.digest);
  }, 120_000);

  it('writes numbers the same whatever their last bits, and rows whatever their order', () => {
    expect(plainValue(0.1 + 0.2)).toBe(plainValue(0.3));
    expect(plainValue(1 / 3)).not.toBe(plainValue(0.3333334));
    expect(plainValue(null)).toBe('null');
    expect(plainValue(12n)).toBe('12');
    expect(rowLines([{ b: 1, a: 'x' }, { a: 'w', b: 2 }])).toEqual(rowLines([{ a: 'w', b: 2 }, { a: 'x', b: 1 }]));
    const q = { recordings: [{ recording: 'r', channels: [{ channel: 'c', flags: [{ name: 'saturation', severity: 'warn', value: 0.5 }] }] }] };
    expect(flagLines(q)).toEqual(['r\tc\tsaturation\twarn\t0.5']);
  });
});
