// Checks that could not be made read ok by severity; the run names them apart: terminal, quality.json and quality.html.
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { quern, readJson, tempDir } from './helpers.js';

/** A CSV of a 50 Hz sine at 1 kHz, 2 s: arithmetic (common practice), printed to six decimals. */
const sineCsv = (columns: string[]) => ['time,' + columns.join(','), ...Array.from({ length: 2000 }, (_, i) => `${(i / 1000).toFixed(3)},${columns.map((_, c) => (2 * Math.sin(2 * Math.PI * 50 * i / 1000 + c)).toFixed(6)).join(',')}`)].join('\n') + '\n';

describe('checks not made for want of a declaration', () => {
  it('names saturation and resolution on CSV channels without range, once a check, with the groups and what to do', async () => {
    const archive = tempDir();
    for (const g of ['rig-a', 'rig-b']) mkdirSync(join(archive, g));
    writeFileSync(join(archive, 'rig-a', 'one.csv'), sineCsv(['acc_x', 'acc_y']));
    writeFileSync(join(archive, 'rig-a', 'two.csv'), sineCsv(['acc_x', 'acc_y']));
    writeFileSync(join(archive, 'rig-b', 'one.csv'), sineCsv(['acc_x', 'acc_y']));
    writeFileSync(join(archive, 'archive.yaml'), [
      'groups:',
      '  - { name: rig-a, match: "rig-a/*.csv", channels: [{ name: acc_x, quantity: acceleration, unit: m/s^2 }, { name: acc_y, quantity: acceleration, unit: m/s^2 }] }',
      '  - { name: rig-b, match: "rig-b/*.csv", channels: [{ name: acc_x, quantity: acceleration, unit: m/s^2, range: [-10, 10] }, { name: acc_y, quantity: acceleration, unit: m/s^2 }] }',
    ].join('\n') + '\n');
    writeFileSync(join(archive, 'reduction.yaml'), 'statistics: {}\n');
    const out = join(tempDir(), 'out');
    const r = await quern('reduce', archive, '--out', out, '--jobs', '1');
    expect(r.code).toBe(0);
    const lines = r.stdout.split('\n').filter((l) => l.includes('NOT CHECKED'));
    // rig-b's acc_x declares its range, so saturation is checked there.
    expect(lines).toEqual([
      '  NOT CHECKED saturation on 5 channels (groups rig-a, rig-b): declare range in archive.yaml',
      '  NOT CHECKED resolution on 6 channels (groups rig-a, rig-b): floating-point samples keep no converter step: declare bits and range in archive.yaml to check the one the converter gave them',
    ]);
    const q = readJson(join(out, 'quality.json'));
    expect(q.totals.not_assessed).toEqual({
      saturation: { channels: 5, groups: ['rig-a', 'rig-b'], why: ['declare range in archive.yaml'], reasons: [{ why: 'declare range in archive.yaml', channels: 5, groups: ['rig-a', 'rig-b'] }] },
      resolution: { channels: 6, groups: ['rig-a', 'rig-b'], why: ['floating-point samples keep no converter step: declare bits and range in archive.yaml to check the one the converter gave them'], reasons: [{ why: 'floating-point samples keep no converter step: declare bits and range in archive.yaml to check the one the converter gave them', channels: 6, groups: ['rig-a', 'rig-b'] }] },
    });
    // The severities stay as they were: a check not made is ok by severity.
    expect(q.totals.flags.saturation.ok).toBe(6);
    expect(readFileSync(join(out, 'quality.html'), 'utf8')).toContain('Not checked: saturation on 5 channels (groups rig-a, rig-b): declare range in archive.yaml.');
  });

  it('gives each reason with the groups it applies to, so a group is never told to declare what it already declares', async () => {
    const archive = tempDir();
    for (const g of ['bare', 'bits-only', 'bare-too']) { mkdirSync(join(archive, g)); writeFileSync(join(archive, g, 'one.csv'), sineCsv(['acc'])); }
    // A converter step is range / 2^bits (common practice): bits without range give none, so that group is told range only.
    writeFileSync(join(archive, 'archive.yaml'), [
      'groups:',
      '  - { name: bare, match: "bare/*.csv", channels: [{ name: acc, quantity: acceleration, unit: m/s^2 }] }',
      '  - { name: bits-only, match: "bits-only/*.csv", channels: [{ name: acc, quantity: acceleration, unit: m/s^2, bits: 12 }] }',
      '  - { name: bare-too, match: "bare-too/*.csv", channels: [{ name: acc, quantity: acceleration, unit: m/s^2 }] }',
    ].join('\n') + '\n');
    writeFileSync(join(archive, 'reduction.yaml'), 'statistics: {}\n');
    const out = join(tempDir(), 'out');
    const r = await quern('reduce', archive, '--out', out, '--jobs', '1');
    expect(r.code, r.stdout + r.stderr).toBe(0);
    const both = 'floating-point samples keep no converter step: declare bits and range in archive.yaml to check the one the converter gave them';
    const range = 'floating-point samples keep no converter step: declare range with bits in archive.yaml';
    const line = `resolution on 3 channels: groups bare, bare-too: ${both}; group bits-only: ${range}`;
    expect(r.stdout.split('\n').filter((l) => l.includes('NOT CHECKED resolution'))).toEqual([`  NOT CHECKED ${line}`]);
    const q = readJson(join(out, 'quality.json'));
    expect(q.totals.not_assessed.resolution).toEqual({
      channels: 3, groups: ['bare', 'bare-too', 'bits-only'], why: [both, range],
      reasons: [{ why: both, channels: 2, groups: ['bare', 'bare-too'] }, { why: range, channels: 1, groups: ['bits-only'] }],
    });
    expect(readFileSync(join(out, 'quality.html'), 'utf8')).toContain(`Not checked: ${line}.`);
  });

  it('names only what a range declared on a strain channel leaves unchecked', async () => {
    const archive = tempDir();
    writeFileSync(join(archive, 'one.csv'), sineCsv(['acc_x']));
    writeFileSync(join(archive, 'archive.yaml'), 'groups:\n  - { name: g, match: "*.csv", channels: [{ name: acc_x, quantity: strain, unit: um/m, range: [-10, 10] }] }\n');
    writeFileSync(join(archive, 'reduction.yaml'), 'statistics: {}\n');
    const out = join(tempDir(), 'out');
    const r = await quern('reduce', archive, '--out', out, '--jobs', '1');
    // Resolution stays not made on floating-point samples; saturation and offset (not meant for strain) are not named.
    expect(r.stdout.split('\n').filter((l) => l.includes('NOT CHECKED'))).toEqual(['  NOT CHECKED resolution on 1 channel (group g): floating-point samples keep no converter step: declare bits and range in archive.yaml to check the one the converter gave them']);
  });
});
