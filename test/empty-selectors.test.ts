// A spec `only:` selector, or a watched trend feature, that selects no channel of the archive is a note of check and reduce.
import { mkdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { parquetReadObjects } from 'hyparquet';
import { compressors } from 'hyparquet-compressors';
import { describe, expect, it } from 'vitest';
import { selectorNotes, unwatchedFeatureNotes } from '../pipeline/declare/empty-selectors.js';
import { trendOptions } from '../pipeline/trends/options.js';
import type { ReductionSpec } from '../spec/reduction.js';
import { quern, readJson, tempDir } from './helpers.js';

/** Two CSV recordings of a 50 Hz tone (acc_de, acceleration) and an 80 Hz one (mic, sound_pressure) at 1 kHz. */
function toneArchive(): string {
  const dir = join(tempDir(), 'arc');
  mkdirSync(dir);
  writeFileSync(join(dir, 'archive.yaml'), [
    'groups:', '  - name: rig', '    match: "*/*.csv"', '    channels:',
    '      - { name: acc_de, quantity: acceleration, unit: m/s^2 }',
    '      - { name: mic, quantity: sound_pressure, unit: Pa }', '',
  ].join('\n'));
  const rows = Array.from({ length: 1000 }, (_, i) => `${(i / 1000).toFixed(3)},${Math.sin(2 * Math.PI * 50 * i / 1000).toFixed(6)},${(0.1 * Math.sin(2 * Math.PI * 80 * i / 1000)).toFixed(6)}`);
  for (const folder of ['a', 'b']) {
    mkdirSync(join(dir, folder));
    writeFileSync(join(dir, folder, 'run1.csv'), ['time,acc_de,mic', ...rows].join('\n'));
  }
  return dir;
}

const ENVELOPE = 'envelope:\n  filter: { kind: bandpass, order: 4, low_hz: 100, high_hz: 300 }\n';

describe('spec selectors that select no channel', () => {
  it('names an emptied section, the entry and what the archive has, in check, on the run\'s terminal and in run.json; the figures are indeed empty', async () => {
    const archive = toneArchive();
    // "acceleraton" is "acceleration" less one letter (Levenshtein distance 1, by hand); "acc-*" matches no name with an underscore.
    writeFileSync(join(archive, 'reduction.yaml'), `statistics: {}\nspectrum: { segment: 256 }\n${ENVELOPE}  only: { quantities: [acceleraton] }\nvelocity_bands: { ranges: [[10, 100]], only: { names: ["acc-*"] } }\ntrends: { features: [rms, env_rms, "velocity_*_rms"] }\n`);
    const envelope = /reduction\.yaml envelope\.only selects no channel of the archive \(quantities "acceleraton" \(did you mean acceleration\?\)\), so its figures stay empty on every recording; archive\.yaml's channels have quantities acceleration, sound_pressure and names acc_de, mic/;
    const velocity = /reduction\.yaml velocity_bands\.only selects no channel of the archive \(names "acc-\*"\), so its figures stay empty/;
    const watchedEnv = /reduction\.yaml trends\.features watches env_rms, which the envelope figures compute on no channel of the archive \(they select quantities acceleraton\), so no trend of it can change/;
    const watchedVelocity = /reduction\.yaml trends\.features watches velocity_10_100_rms, which the velocity_bands figures compute on no channel of the archive \(they select names acc-\*\)/;
    const check = quern('check', archive);
    expect(check.code, check.stderr).toBe(0);
    for (const note of [envelope, velocity, watchedEnv, watchedVelocity]) expect(check.stdout).toMatch(new RegExp(`NOTE +\\S*${note.source}`));
    const out = join(archive, '..', 'out');
    const run = quern('reduce', archive, '--out', out, '--jobs', '1');
    expect(run.code, run.stderr).toBe(0);
    for (const note of [envelope, velocity, watchedEnv, watchedVelocity]) expect(run.stdout).toMatch(new RegExp(`DECLARED \\S*${note.source}`));
    expect(readJson(join(out, 'run.json')).declaration_notes).toHaveLength(4);
    // What the notes say is so: neither figure was computed on any channel.
    const rows = await parquetReadObjects({ file: new Uint8Array(readFileSync(join(out, 'features.parquet'))).buffer, compressors }) as Record<string, unknown>[];
    expect(rows).toHaveLength(4);
    for (const r of rows) { expect(r.env_rms).toBeNull(); expect(r.velocity_10_100_rms).toBeNull(); expect(r.rms).not.toBeNull(); }
  });

  it('names an entry a slip away from a quantity though its section selects other channels, and says nothing of a clean spec', () => {
    const archive = toneArchive();
    writeFileSync(join(archive, 'reduction.yaml'), `statistics: {}\n${ENVELOPE}  only: { quantities: [acceleration, sound_presure] }\ntrends: { features: [rms, env_rms] }\n`);
    const check = quern('check', archive);
    expect(check.stdout).toMatch(/NOTE +\S*reduction\.yaml envelope\.only quantities "sound_presure" selects no channel of the archive; did you mean sound_pressure\?/);
    expect(check.stdout.match(/NOTE/g)).toHaveLength(1);
    // Every entry selects a channel (by glob too), and a quantity quern has no figure for is no slip.
    writeFileSync(join(archive, 'reduction.yaml'), `statistics: {}\n${ENVELOPE}  only: { names: ["acc_*"], quantities: [torque] }\nvelocity_bands: [[10, 100]]\ntrends: { features: [rms, env_rms, "velocity_*_rms"] }\n`);
    const clean = quern('check', archive);
    expect(clean.code, clean.stderr).toBe(0);
    expect(clean.stdout).not.toMatch(/NOTE/);
  });

  it('leaves a names selector unjudged when a group takes its channel names from its files', () => {
    const archive = toneArchive();
    writeFileSync(join(archive, 'archive.yaml'), 'groups:\n  - name: rig\n    match: "*/*.csv"\n');
    writeFileSync(join(archive, 'reduction.yaml'), `statistics: {}\n${ENVELOPE}  only: { names: ["acc-*"] }\n`);
    expect(quern('check', archive).stdout).not.toMatch(/NOTE/);
    // Undeclared channels are of quantity "unknown": a quantity selector is judged all the same.
    writeFileSync(join(archive, 'reduction.yaml'), `statistics: {}\n${ENVELOPE}  only: { quantities: [vibration] }\n`);
    expect(quern('check', archive).stdout).toMatch(/NOTE +\S*reduction\.yaml envelope\.only selects no channel of the archive \(quantities "vibration"\), so its figures stay empty on every recording; archive\.yaml's channels have quantities unknown$/m);
    // The built-in default spec selects by quern's standard quantities (acceleration, sound_pressure, strain, stress), which an
    // archive without such sensors leaves empty by design: no note.
    rmSync(join(archive, 'reduction.yaml'));
    expect(quern('check', archive).stdout).not.toMatch(/NOTE/);
  });

  it('judges each octave set\'s own selector, named by its place in the list, and a watched band by its own set\'s', () => {
    const a = { names: ['acc_de', 'mic'], quantities: ['acceleration', 'sound_pressure'], namesKnown: true };
    // "mik" is "mic" with one letter changed (Levenshtein distance 1, by hand); the first set selects acc_de.
    const spec: ReductionSpec = {
      octave_bands: [{ fraction: 1, from: 500, to: 1000, only: { names: ['acc_*'] } }, { fraction: 3, from: 800, to: 1000, only: { names: ['mik'] } }],
      trends: { features: ['oct1_1000_rms', 'oct3_1000_rms'] },
    };
    expect(selectorNotes(spec, a)).toEqual([
      'reduction.yaml octave_bands[1].only selects no channel of the archive (names "mik" (did you mean mic?)), so its figures stay empty on every recording; archive.yaml\'s channels have quantities acceleration, sound_pressure and names acc_de, mic',
    ]);
    expect(unwatchedFeatureNotes(spec, trendOptions(spec), a)).toEqual([
      'reduction.yaml trends.features watches oct3_1000_rms, which the octave_bands figures compute on no channel of the archive (they select names mik), so no trend of it can change; archive.yaml\'s channels have quantities acceleration, sound_pressure and names acc_de, mic',
    ]);
    // One set in the object form keeps the section's own name.
    expect(selectorNotes({ octave_bands: { fraction: 1, only: { names: ['mik'] } } }, a)[0]).toMatch(/^reduction\.yaml octave_bands\.only selects no channel/);
  });
});
