// archive.yaml and reduction.yaml: every error names the file, the line and the key path.
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { loadArchiveDeclaration, loadSpec, readArchiveDeclaration } from '../pipeline/declare/declare.js';
import { editDistance, likelyMeant } from '../pipeline/declare/nearest-names.js';
import { UsageError } from '../pipeline/declare/yaml-file.js';
import { quern, readJson, tempDir } from './helpers.js';
import { unfedGroupNote, unfedGroups } from '../pipeline/select/group-coverage.js';
import type { GroupDeclaration } from '../spec/archive.js';

function archiveWith(yaml: string): string {
  const dir = join(tempDir(), 'arc');
  mkdirSync(dir);
  writeFileSync(join(dir, 'archive.yaml'), yaml);
  return dir;
}

const errorOf = (p: Promise<unknown>) => p.then(() => { throw new Error('expected a UsageError'); }, (e) => { expect(e).toBeInstanceOf(UsageError); return (e as Error).message; });

describe('archive declaration', () => {
  it('reads groups with defaults filled in', async () => {
    const d = await loadArchiveDeclaration(archiveWith('groups:\n  - name: g\n    match: "*.wav"\n    labels: { rig: 7 }\n    channels:\n      - { name: a, range: [-5, 5] }\n'));
    expect(d.groups[0].match).toEqual(['*.wav']);
    expect(d.groups[0].labels).toEqual({ rig: '7' });
    expect(d.groups[0].channels![0]).toMatchObject({ name: 'a', quantity: 'unknown', unit: 'FS', scale: 1, offset: 0, range: [-5, 5], bits: null });
  });

  it('refuses, before any reducing, a label named like a column the spec gives features.parquet (rms, quality), naming file and line', () => {
    const archive = archiveWith('groups:\n  - name: g\n    match: "*.wav"\n    labels:\n      rig: bay-3\n      rms: high\n      quality: gold\n');
    for (const args of [['check', archive], ['reduce', archive, '--out', join(archive, '..', 'out')]]) {
      const r = quern(...args);
      expect(r.code, r.stderr).toBe(2);
      expect(r.stderr).toMatch(/archive\.yaml:6: groups\[0\]\.labels\.rms: label "rms" would clash with features\.parquet's column of that name under this reduction spec; rename the label/);
      expect(r.stderr).toMatch(/archive\.yaml:7: groups\[0\]\.labels\.quality: label "quality" would clash/);
    }
  });

  it('refuses a label named like a column but for case, and labels of two groups that differ only in case: SQL readers take them as one', () => {
    const archive = archiveWith('groups:\n  - name: g\n    match: "a/*.wav"\n    labels:\n      RMS: high\n      Quality: gold\n      Rig: bay-3\n  - name: h\n    match: "b/*.wav"\n    labels: { rig: bay-4 }\n');
    const r = quern('check', archive);
    expect(r.code, r.stderr).toBe(2);
    expect(r.stderr).toMatch(/archive\.yaml:5: groups\[0\]\.labels\.RMS: label "RMS" would clash with features\.parquet's column rms \(SQL readers take names without regard to case, so "RMS" is "rms" there\)/);
    expect(r.stderr).toMatch(/archive\.yaml:6: groups\[0\]\.labels\.Quality: label "Quality" would clash with features\.parquet's column quality/);
    // Group g is broken already (its labels clash with columns), so its labels are left out of h's checks; the case clash
    // is told with g's problems, where the mending is to be done.
    expect(r.stderr).toMatch(/archive\.yaml:7: groups\[0\]\.labels\.Rig: label "Rig" differs from the label "rig" of another group only in case/);
    expect(r.stderr).not.toMatch(/groups\[1\]/);
    // Between two usable groups the later one is told.
    const both = quern('check', archiveWith('groups:\n  - name: g\n    match: "a/*.wav"\n    labels: { Rig: bay-3 }\n  - name: h\n    match: "b/*.wav"\n    labels: { rig: bay-4 }\n'));
    expect(both.code).toBe(2);
    expect(both.stderr).toMatch(/archive\.yaml:7: groups\[1\]\.labels\.rig: label "rig" differs from the label "Rig" of another group only in case/);
  });

  it('points at the line of a bad range, an unknown key and a wrong enum', async () => {
    const yaml = [
      'groups:', //                      1
      '  - name: g', //                  2
      '    match: "*.wav"', //           3
      '    format: mp3', //              4
      '    channels:', //                5
      '      - name: a', //              6
      '        range: [5]', //           7
      '        sensitivity: 3', //       8
    ].join('\n');
    const message = await errorOf(loadArchiveDeclaration(archiveWith(yaml)));
    expect(message).toMatch(/archive\.yaml:4: groups\[0\]\.format: must be one of "wav", "csv", "raw", "flac", "hdf5", "mat"/);
    expect(message).toMatch(/archive\.yaml:7: groups\[0\]\.channels\[0\]\.range: must NOT have fewer than 2 items/);
    expect(message).toMatch(/archive\.yaml:8: groups\[0\]\.channels\[0\]\.sensitivity: unknown key "sensitivity"/);
  });

  it('reads HDF5 and FLAC sections, and asks HDF5 groups for a sample rate and a fitting channel list', async () => {
    const good = 'groups:\n  - name: h\n    match: "*.h5"\n    hdf5: { datasets: acq/x, channel_axis: 0, sample_rate_attribute: fs }\n  - name: f\n    match: "*.flac"\n    flac: { start_time_tag: START_TIME }\n';
    const d = await loadArchiveDeclaration(archiveWith(good));
    expect(d.groups[0].hdf5).toEqual({ datasets: ['/acq/x'], channel_axis: 0, sample_rate_attribute: 'fs', start_time_attribute: null });
    expect(d.groups[1].flac).toEqual({ start_time_tag: 'START_TIME' });
    const bad = 'groups:\n  - name: h\n    match: "*.h5"\n    hdf5: { datasets: [/a, /b] }\n    channels: [{ name: x }]\n  - name: g\n    match: "*.hdf5"\n    format: hdf5\n';
    const message = await errorOf(loadArchiveDeclaration(archiveWith(bad)));
    expect(message).toMatch(/groups\[0\]\.hdf5: HDF5 files need a sample rate/);
    expect(message).toMatch(/hdf5\.datasets names 2 datasets \(one per channel\) but 1 channels are declared/);
    expect(message).toMatch(/groups\[1\]: format hdf5 needs an hdf5 section/);
    const fromDatasets = await loadArchiveDeclaration(archiveWith('groups:\n  - { name: h, match: "*.h5", hdf5: { datasets: x, sample_rate_dataset: fs, start_time_dataset: /meta/t0 } }\n'));
    expect(fromDatasets.groups[0].hdf5).toEqual({ datasets: ['/x'], channel_axis: null, sample_rate_attribute: null, start_time_attribute: null, sample_rate_dataset: '/fs', start_time_dataset: '/meta/t0' });
    const timed = await loadArchiveDeclaration(archiveWith('groups:\n  - { name: h, match: "*.h5", hdf5: { datasets: x, time_dataset: t } }\n'));
    expect(timed.groups[0].hdf5?.time_dataset).toBe('/t');
    expect(await errorOf(loadArchiveDeclaration(archiveWith('groups:\n  - { name: h, match: "*.h5", hdf5: { datasets: x, time_dataset: t, sample_rate_attribute: fs } }\n')))).toMatch(/groups\[0\]\.hdf5\.time_dataset: give the sample rate once/);
    const twice = 'groups:\n  - { name: h, match: "*.h5", hdf5: { datasets: x, sample_rate_attribute: fs, sample_rate_dataset: fs } }\n';
    expect(await errorOf(loadArchiveDeclaration(archiveWith(twice)))).toMatch(/groups\[0\]\.hdf5\.sample_rate_dataset: give it once: hdf5\.sample_rate_attribute or hdf5\.sample_rate_dataset/);
  });

  it('reads MAT-file sections, and asks MAT groups for a sample rate and a fitting channel list', async () => {
    const good = 'groups:\n  - name: m\n    match: "*.mat"\n    mat: { variables: data, channel_axis: 1, sample_rate_variable: fs, start_time_variable: rec.t0 }\n';
    const d = await loadArchiveDeclaration(archiveWith(good));
    expect(d.groups[0].mat).toEqual({ variables: ['data'], channel_axis: 1, sample_rate_variable: 'fs', start_time_variable: 'rec.t0' });
    const bad = 'groups:\n  - name: m\n    match: "*.mat"\n    mat: { variables: [a, b], channel_axis: 0 }\n    channels: [{ name: x }]\n  - name: n\n    match: "*.m5"\n    format: mat\n';
    const message = await errorOf(loadArchiveDeclaration(archiveWith(bad)));
    expect(message).toMatch(/groups\[0\]\.mat: MAT-files need a sample rate/);
    expect(message).toMatch(/groups\[0\]\.mat\.channel_axis: channel_axis applies to one two-dimensional variable/);
    expect(message).toMatch(/mat\.variables names 2 variables \(one per channel\) but 1 channels are declared/);
    expect(message).toMatch(/groups\[1\]: format mat needs a mat section/);
    const both = 'groups:\n  - { name: m, match: "*.mat", mat: { variables: x, sample_rate_variable: fs, time_variable: t } }\n';
    expect(await errorOf(loadArchiveDeclaration(archiveWith(both)))).toMatch(/groups\[0\]\.mat\.time_variable: give the sample rate once/);
    const timed = await loadArchiveDeclaration(archiveWith('groups:\n  - { name: m, match: "*.mat", mat: { variables: x, time_variable: t } }\n'));
    expect(timed.groups[0].mat).toEqual({ variables: ['x'], channel_axis: null, sample_rate_variable: null, start_time_variable: null, time_variable: 't' });
    const misnamed = 'groups:\n  - name: o\n    match: "*.mat"\n    mat: { variables: "rec..x" }\n    sample_rate: 100\n';
    expect(await errorOf(loadArchiveDeclaration(archiveWith(misnamed)))).toMatch(/archive\.yaml:4: groups\[0\]\.mat\.variables: must match pattern/);
  });

  it('reads capture_every as a span, and refuses one of zero or in other words', async () => {
    const d = await loadArchiveDeclaration(archiveWith('groups:\n  - { name: w, match: "*.wav", capture_every: 1d }\n  - { name: x, match: "*.flac" }\n'));
    expect(d.groups.map((g) => g.capture_every)).toEqual(['1d', null]);
    expect(await errorOf(loadArchiveDeclaration(archiveWith('groups:\n  - { name: w, match: "*.wav", capture_every: 0h }\n')))).toMatch(/groups\[0\]\.capture_every: capture_every must be a span longer than zero/);
    expect(await errorOf(loadArchiveDeclaration(archiveWith('groups:\n  - { name: w, match: "*.wav", capture_every: daily }\n')))).toMatch(/groups\[0\]\.capture_every: must match pattern/);
  });

  it('catches what the schema cannot: reversed ranges, duplicate names, raw files without layout', async () => {
    const yaml = 'groups:\n  - name: g\n    match: "*.bin"\n    format: raw\n    channels:\n      - { name: a, range: [5, -5] }\n      - { name: a }\n';
    const message = await errorOf(loadArchiveDeclaration(archiveWith(yaml)));
    expect(message).toMatch(/:6: groups\[0\]\.channels\[0\]\.range: range must be \[lower, upper\]/);
    expect(message).toMatch(/:7: groups\[0\]\.channels\[1\]\.name: channel name "a" appears twice/);
    expect(message).toMatch(/:2: groups\[0\]: format raw needs a layout/);
    expect(message).toMatch(/format raw needs sample_rate/);
  });

  it('lists every problem of a group at once: the schema\'s (a number beyond 1.8e308, an unknown key) and the ones it cannot see', async () => {
    for (const slip of ['scale: 1e400', 'scael: 5']) {
      const yaml = `groups:\n  - name: riga\n    match: "riga/*.wav"\n    channels:\n      - { name: a1, scale: 50, range: [50, -50] }\n      - { name: a1, ${slip} }\n  - name: rigb\n    match: "rigb/*.wav"\n`;
      const message = await errorOf(loadArchiveDeclaration(archiveWith(yaml)));
      expect(message.split('\n').map((l) => l.replace(/^.*archive\.yaml:/, ''))).toEqual([
        '5: groups[0].channels[0].range: range must be [lower, upper] with lower < upper, got [50, -50]',
        `6: groups[0].channels[1].${slip.split(':')[0]}: ${slip.startsWith('scale') ? 'must be a finite number' : 'unknown key "scael"; did you mean scale?'}${slip.startsWith('scale') ? ' (.inf, .nan and values beyond 1.8e308 are not); write the value itself' : ''}`,
        '6: groups[0].channels[1].name: channel name "a1" appears twice in this group',
      ]);
      // The run sets the group aside with all three, and reduces the other.
      const d = await readArchiveDeclaration(archiveWith(yaml));
      expect(d.groups.map((g) => [g.name, (g.broken ?? []).length])).toEqual([['riga', 3], ['rigb', 0]]);
    }
  });

  it('passes over values of the wrong type, which the schema names, and still finds the problems beside them', async () => {
    const yaml = [
      'groups:', //                                                     1
      '  - name: g', //                                                 2
      '    match: "*.h5"', //                                           3
      '    labels: [rig, bay]', //                                      4
      '    capture_every: 12', //                                       5
      '    hdf5: { datasets: 7, channel_axis: 1 }', //                  6
      '    mat: mine', //                                               7
      '    layout: 4', //                                               8
      '    channels:', //                                               9
      '      - just-a-name', //                                         10
      '      - { name: 3, range: oops }', //                            11
      '      - { name: b, range: [1, .inf], trigger_level: 1 }', //     12
      '      - { name: b, range: [2, 1] }', //                          13
      '  - name: h', //                                                 14
      '    match: "*.wav"', //                                          15
      '    labels: { Rig: a, RIG: b }', //                              16
      '    channels: { name: c }', //                                   17
      '',
    ].join('\n');
    const message = await errorOf(loadArchiveDeclaration(archiveWith(yaml)));
    // Found beside the refused values: a trigger without pulses, a name twice, a reversed range, a case clash of labels.
    expect(message).toMatch(/:12: groups\[0\]\.channels\[2\]\.trigger_level: trigger_level applies to a tacho channel only/);
    expect(message).toMatch(/:13: groups\[0\]\.channels\[3\]\.name: channel name "b" appears twice in this group/);
    expect(message).toMatch(/:13: groups\[0\]\.channels\[3\]\.range: range must be \[lower, upper\] with lower < upper, got \[2, 1\]/);
    expect(message).toMatch(/:16: groups\[1\]\.labels\.RIG: label "RIG" differs from the label "Rig" of the same group only in case/);
    // The schema's own, each once; nothing said twice about a value the schema refused (1e400's range, 12 as a span).
    expect(message).toMatch(/:12: groups\[0\]\.channels\[2\]\.range\[1\]: must be a finite number/);
    expect(message).toMatch(/:5: groups\[0\]\.capture_every: must be string/);
    expect(message).not.toMatch(/capture_every must be a span|got \[1, Infinity\]|layout says/);

    // A key said to be missing where the schema refused one beside it, maybe that key misspelt, is left to the schema's line.
    const misspelt = await errorOf(loadArchiveDeclaration(archiveWith('groups:\n  - name: g\n    match: "*.wav"\n    channels:\n      - { name: t, pulses_per_rve: 2, trigger_level: 1 }\n')));
    expect(misspelt.replace(/^.*archive\.yaml:/, '')).toBe('5: groups[0].channels[0].pulses_per_rve: unknown key "pulses_per_rve"; did you mean pulses_per_rev?\nno group of archive.yaml can be used, so a run would reduce nothing; it stops until the groups are mended');
  });

  it('reads a tacho channel, and refuses a trigger on a channel without pulses_per_rev', async () => {
    const d = await loadArchiveDeclaration(archiveWith('groups:\n  - name: g\n    match: "*.wav"\n    channels:\n      - { name: t, unit: V, pulses_per_rev: 2, trigger_level: 2.5 }\n      - { name: a }\n'));
    expect(d.groups[0].channels![0]).toMatchObject({ name: 't', pulses_per_rev: 2, trigger_level: 2.5, trigger_hysteresis: null });
    expect(d.groups[0].channels![1]).not.toHaveProperty('pulses_per_rev');
    const trigger = await errorOf(loadArchiveDeclaration(archiveWith('groups:\n  - name: g\n    match: "*.wav"\n    channels:\n      - { name: a, trigger_level: 1 }\n')));
    expect(trigger).toMatch(/:5: groups\[0\]\.channels\[0\]\.trigger_level: trigger_level applies to a tacho channel only; declare pulses_per_rev/);
    const zero = await errorOf(loadArchiveDeclaration(archiveWith('groups:\n  - name: g\n    match: "*.wav"\n    channels:\n      - { name: b, pulses_per_rev: 0 }\n')));
    expect(zero).toMatch(/:5: groups\[0\]\.channels\[0\]\.pulses_per_rev: must be >= 1/);
  });

  it('reports YAML syntax errors with their line, and a missing declaration with what to do', async () => {
    expect(await errorOf(loadArchiveDeclaration(archiveWith('groups:\n  - name: [unclosed\n')))).toMatch(/archive\.yaml:\d+: YAML syntax/);
    expect(await errorOf(loadArchiveDeclaration(tempDir()))).toMatch(/missing; every archive declares its recordings in archive\.yaml/);
  });
});

describe('unknown keys and syntax errors: what was meant, and what to do', () => {
  it('counts edits as Levenshtein distance, and takes a slip for the name it lies near but not another word of the trade', () => {
    // Levenshtein's distance of "kitten" and "sitting" is 3, the worked example the method is usually shown with (from memory).
    expect(editDistance('kitten', 'sitting')).toBe(3);
    expect(editDistance('accelaration', 'acceleration')).toBe(1);
    expect(likelyMeant('accelaration', ['acceleration', 'sound_pressure', 'strain', 'stress'])).toEqual(['acceleration']);
    expect(likelyMeant('onyl', ['ranges', 'only'])).toEqual(['only']);
    // "strain" and "stress" are three edits apart: two quantities, never one taken for the other.
    expect(likelyMeant('stress', ['strain'])).toEqual([]);
    expect(likelyMeant('sensitivity', ['name', 'quantity', 'unit', 'scale'])).toEqual([]);
  });

  it('answers an unknown key with the allowed key it is nearest to, or the keys allowed in its place', async () => {
    const yaml = [
      'descripton: rig B', //                                        1
      'groups:', //                                                  2
      '  - name: g', //                                              3
      '    match: "*.wav"', //                                       4
      '    smaple_rate: 48000', //                                   5
      '    channels:', //                                            6
      '      - { name: a, max_frequncy_hz: 100 }', //                7
      '      - { name: b, sensitivity: 3 }', //                      8
    ].join('\n');
    const message = await errorOf(loadArchiveDeclaration(archiveWith(yaml)));
    expect(message).toMatch(/archive\.yaml:1: descripton: unknown key "descripton"; did you mean description\?/);
    expect(message).toMatch(/archive\.yaml:5: groups\[0\]\.smaple_rate: unknown key "smaple_rate"; did you mean sample_rate\?/);
    expect(message).toMatch(/archive\.yaml:7: groups\[0\]\.channels\[0\]\.max_frequncy_hz: unknown key "max_frequncy_hz"; did you mean max_frequency_hz\?/);
    expect(message).toMatch(/archive\.yaml:8: groups\[0\]\.channels\[1\]\.sensitivity: unknown key "sensitivity"; the keys allowed here are name, quantity, unit, scale, offset, range, bits, max_frequency_hz/);
    const dir = archiveWith('groups: []');
    writeFileSync(join(dir, 'reduction.yaml'), 'spectrum: { segmnt: 4096 }\nvelocity_bands: { ranges: [[10, 1000]], onyl: { quantities: [acceleration] } }\ntrends: { limits: { rms: { wran: 3 } } }\n');
    const spec = await errorOf(loadSpec(dir));
    expect(spec).toMatch(/reduction\.yaml:1: spectrum\.segmnt: unknown key "segmnt"; did you mean segment\?/);
    // Inside a section of either form (a list, or a map with its ranges), and under a map of any feature's name.
    expect(spec).toMatch(/reduction\.yaml:2: velocity_bands\.onyl: unknown key "onyl"; did you mean only\?/);
    expect(spec).toMatch(/reduction\.yaml:3: trends\.limits\.rms\.wran: unknown key "wran"; did you mean warn\?/);
  });

  it('answers a retired key with what replaced it, beside an unknown one', async () => {
    const dir = archiveWith('groups: []');
    writeFileSync(join(dir, 'reduction.yaml'), 'statistics: {}\nquality:\n  resolution: { warn_snr_db: 25, fail_snr_db: 15 }\n  offset: { nope: 1 }\n');
    const spec = await errorOf(loadSpec(dir));
    expect(spec).toMatch(/reduction\.yaml:3: quality\.resolution\.warn_snr_db: "warn_snr_db" is retired: since version 0\.4\.0 the resolution flag judges the errors .*; write warn_error \(a fraction of the figure, default 0\.05\) instead/);
    expect(spec).toMatch(/quality\.resolution\.fail_snr_db: "fail_snr_db" is retired: .*write fail_error/);
    expect(spec).toMatch(/reduction\.yaml:4: quality\.offset\.nope: unknown key "nope"/);
  });

  it('answers a retired key written one level up with the unknown key\'s message and the retired key\'s', async () => {
    const dir = archiveWith('groups: []');
    writeFileSync(join(dir, 'reduction.yaml'), 'statistics: {}\nquality:\n  warn_snr_db: 25\n  resolution: { note_snr_db: 30 }\n');
    const spec = await errorOf(loadSpec(dir));
    expect(spec).toMatch(/reduction\.yaml:3: quality\.warn_snr_db: unknown key "warn_snr_db"; [^\n]*; "warn_snr_db" belonged under quality\.resolution, where it is retired: since version 0\.4\.0 the resolution flag judges the errors [^\n]*; write warn_error \(a fraction of the figure, default 0\.05\) under quality\.resolution instead/);
    expect(spec).toMatch(/reduction\.yaml:4: quality\.resolution\.note_snr_db: "note_snr_db" is retired: [^\n]*write note_error/);
    // A key no spec ever took anywhere gets the unknown key's message alone.
    writeFileSync(join(dir, 'reduction.yaml'), 'statistics: {}\nquality:\n  warn_snr: 25\n');
    expect(await errorOf(loadSpec(dir))).not.toMatch(/retired/);
  });

  it('says what to do about a YAML syntax error: indentation with spaces, a list item without its dash, an unclosed quote, a missing space after a colon', async () => {
    const cases: [string, RegExp][] = [
      ['groups:\n  - name: g\n    match: "*.wav"\n    channels:\n    - { name: a }\n        - { name: b }\n', /archive\.yaml:6: YAML syntax: .*; indent this line with as many spaces as the other keys or list items at its level/],
      ['groups:\n  - name: g\n   match: "*.wav"\n', /archive\.yaml:3: YAML syntax: .*; (indent this line with as many spaces|start each list item with "- ")/],
      ['groups:\n\t- name: g\n', /archive\.yaml:2: YAML syntax: .*; indent with spaces: YAML does not allow tabs there/],
      ['groups:\n  - name: "g\n    match: x\n', /YAML syntax: .*; close the quote opened here/],
      ['groups:\n  - name: g match: "*.wav"\n', /archive\.yaml:2: YAML syntax: .*; write one key a line as "key: value", with a space after the colon/],
      // An unquoted glob starting with * is a YAML alias node, which names an anchor (YAML 1.2; from memory): quote it.
      ['groups:\n  - name: g\n    match: *.wav\n', /archive\.yaml:3: YAML syntax: \*\.wav reads as a reference to an anchor named \.wav, which the file does not define; put a value that starts with \* in quotes \("\*\.wav"\)/],
    ];
    for (const [yaml, expected] of cases) expect(await errorOf(loadArchiveDeclaration(archiveWith(yaml)))).toMatch(expected);
  });
});

describe('declarations quern takes but may not be what was meant', () => {
  /** An archive of two CSV recordings of a 50 Hz tone at 1 kHz, in folders a and b, declared by `groups`. */
  function toneArchive(groups: string): string {
    const dir = archiveWith(`groups:\n${groups}`);
    const rows = Array.from({ length: 1000 }, (_, i) => `${(i / 1000).toFixed(3)},${Math.sin(2 * Math.PI * 50 * i / 1000).toFixed(6)},${(0.1 * Math.sin(2 * Math.PI * 80 * i / 1000)).toFixed(6)}`);
    for (const folder of ['a', 'b']) {
      mkdirSync(join(dir, folder));
      writeFileSync(join(dir, folder, 'run1.csv'), ['time,acc,mic', ...rows].join('\n'));
    }
    writeFileSync(join(dir, 'reduction.yaml'), 'statistics: {}\nspectrum: { segment: 256 }\nvelocity_bands: [[10, 100]]\nsound_level: {}\n');
    return dir;
  }

  it('names a quantity a slip away from one the spec selects by, and a unit the figures of its quantity cannot convert, in check and reduce', () => {
    const archive = toneArchive([
      '  - name: rig-b', //                                                                   2
      '    match: "a/*.csv"', //                                                              3
      '    channels:', //                                                                     4
      '      - { name: acc, quantity: accelaration, unit: m/s^2 }', //                        5
      '      - { name: mic, quantity: sound pressure, unit: Pa }', //                         6
      '  - name: rig-c', //                                                                   7
      '    match: "b/*.csv"', //                                                              8
      '    channels:', //                                                                     9
      '      - { name: acc, quantity: acceleration, unit: m/s }', //                          10
      '      - { name: mic, quantity: sound_pressure, unit: pa }', //                         11
      '', //
    ].join('\n'));
    const quantity = /quantity "accelaration" of channel acc \(group rig-b, archive\.yaml line 5\) is not one quern knows; did you mean acceleration\? Figures and flags that select acceleration \(velocity_bands, the offset flag\) leave it out/;
    const spaced = /quantity "sound pressure" of channel mic \(group rig-b, archive\.yaml line 6\) is not one quern knows; did you mean sound_pressure\? Figures and flags that select sound_pressure \(sound_level, the offset flag\) leave it out/;
    const velocityUnit = /acceleration channel acc \(group rig-c, archive\.yaml line 10\) has unit "m\/s", not an acceleration unit quern converts \(m\/s\^2, .*\); did you mean m\/s²\? Velocity is left empty for it/;
    const pascals = /sound_pressure channel mic \(group rig-c, archive\.yaml line 11\) has unit "pa", not a pressure unit quern converts to pascals \(Pa, .*\); did you mean Pa\? Sound levels are left empty for it/;
    const check = quern('check', archive);
    expect(check.code, check.stderr).toBe(0);
    for (const note of [quantity, spaced, velocityUnit, pascals]) expect(check.stdout).toMatch(new RegExp(`NOTE +${note.source}`));
    const out = join(archive, '..', 'out');
    const run = quern('reduce', archive, '--out', out, '--jobs', '1');
    expect(run.code, run.stderr).toBe(0);
    for (const note of [quantity, spaced, velocityUnit, pascals]) expect(run.stdout).toMatch(new RegExp(`DECLARED ${note.source}`));
    expect(readJson(join(out, 'run.json')).declaration_notes).toHaveLength(4);
  });

  it('leaves alone quantities quern has no figures for, and those the spec itself selects by', () => {
    const archive = toneArchive([
      '  - name: rig', '    match: "*/*.csv"', '    channels:',
      '      - { name: acc, quantity: torque, unit: N·m }',
      '      - { name: mic, quantity: accel, unit: g }', '',
    ].join('\n'));
    expect(quern('check', archive).stdout).not.toMatch(/NOTE/);
    writeFileSync(join(archive, 'reduction.yaml'), 'statistics: {}\nspectrum: { segment: 256 }\nvelocity_bands: { ranges: [[10, 100]], only: { quantities: [accel] } }\n');
    // "accel" is what this spec selects by; velocity needs "acceleration" whatever it selects, which "accel" is not a slip of.
    expect(quern('check', archive).stdout).not.toMatch(/NOTE/);
  });

  it('names a group that matches no recording, and one whose files a group listed before it takes', () => {
    const archive = toneArchive([
      '  - name: everything', //        2
      '    match: "*/*.csv"', //         3
      '  - name: rig-b', //             4
      '    match: "a/*.csv"', //         5
      '  - name: retired', //           6
      '    match: "old/*.csv"', //       7
      '', //
    ].join('\n'));
    const check = quern('check', archive);
    expect(check.stdout).toMatch(/NOTE +group rig-b \(archive\.yaml line 4\) matches no recording of its own: its file is taken by group everything, listed before it, and reduced under that declaration/);
    expect(check.stdout).toMatch(/NOTE +group retired \(archive\.yaml line 6\) matches no recording; check its match pattern/);
    const out = join(archive, '..', 'out');
    const run = quern('reduce', archive, '--out', out, '--jobs', '1');
    expect(run.code, run.stderr).toBe(0);
    // A night's run names the group its files are taken from; a retired group is left to run.json, or it would be named every night.
    expect(run.stdout).toMatch(/DECLARED group rig-b \(archive\.yaml line 4\) matches no recording of its own/);
    expect(run.stdout).not.toMatch(/retired/);
    const record = readJson(join(out, 'run.json'));
    expect(record.groups_without_recordings).toEqual(['rig-b', 'retired']);
  });

  it('counts the files each earlier group takes from a group that gets none', () => {
    const groups = [{ match: ['a/*.wav'] }, { match: ['*/x*.wav'] }, { match: ['*/*.wav'] }, { match: ['c/*.wav'] }].map((g, i) => ({ name: `g${i}`, ...g })) as unknown as GroupDeclaration[];
    const recordings = [{ recording: 'a/x1.wav', group: 0 }, { recording: 'a/y.wav', group: 0 }, { recording: 'b/x2.wav', group: 1 }, { recording: 'b/z.wav', group: 2 }];
    expect(unfedGroups(groups, recordings, [2, 4, 6, 8])).toEqual([{ group: 'g3', line: 8, takenBy: [] }]);
    const late = [...groups, { name: 'all', match: ['**/*.wav'] } as unknown as GroupDeclaration];
    expect(unfedGroups(late, recordings)).toEqual([{ group: 'g3', line: null, takenBy: [] }, { group: 'all', line: null, takenBy: [{ group: 'g0', files: 2 }, { group: 'g1', files: 1 }, { group: 'g2', files: 1 }] }]);
    expect(unfedGroupNote(unfedGroups(late, recordings)[1])).toMatch(/^group all matches no recording of its own: its 4 files are taken by groups listed before it \(2 by g0, 1 by g1, 1 by g2\)/);
  });

  it('words the fate of each earlier group\'s files where one of them is broken and another reduces', () => {
    const groups = [{ match: ['a/*.wav'] }, { match: ['b/*.wav'] }, { match: ['*/*.wav'] }].map((g, i) => ({ name: `g${i}`, ...g })) as unknown as GroupDeclaration[];
    const recordings = [{ recording: 'a/x.wav', group: 0 }, { recording: 'a/y.wav', group: 0 }, { recording: 'b/z.wav', group: 1 }];
    const [all] = unfedGroups(groups, recordings, [2, 4, 6]);
    expect(unfedGroupNote(all, 'archive.yaml', new Set(['g1']))).toBe('group g2 (archive.yaml line 6) matches no recording of its own: its 3 files are taken by groups listed before it (2 by g0, reduced under its declaration; 1 by g1, set aside with its broken declaration until it is mended) (a file belongs to the first group that matches); list group g2 first, or narrow the earlier group\'s match');
    expect(unfedGroupNote(all, 'archive.yaml', new Set(['g0', 'g1']))).toMatch(/\(2 by g0, 1 by g1\), and set aside with those broken declarations until they are mended \(/);
    expect(unfedGroupNote(all)).toMatch(/\(2 by g0, 1 by g1\), and reduced under their declarations \(/);
  });
});

describe('reduction spec', () => {
  it('falls back to the embedded default and hashes content, not layout', async () => {
    const dir = archiveWith('groups: []');
    const d = await loadSpec(dir);
    expect(d.source).toBe('(default)');
    const a = join(dir, 'a.yaml'), b = join(dir, 'b.yaml');
    writeFileSync(a, 'statistics: { only: { names: ["acc*"], quantities: [strain] } }\n');
    writeFileSync(b, '# same, laid out differently\nstatistics:\n  only:\n    quantities: [strain]\n    names: ["acc*"]\n');
    expect((await loadSpec(dir, a)).hash).toBe((await loadSpec(dir, b)).hash);
    expect((await loadSpec(dir, a)).hash).not.toBe(d.hash);
  });

  it('names the line of an unknown section', async () => {
    const dir = archiveWith('groups: []');
    writeFileSync(join(dir, 'reduction.yaml'), 'statistics: {}\nspectra: {}\n');
    expect(await errorOf(loadSpec(dir))).toMatch(/reduction\.yaml:2: spectra: unknown key "spectra"/);
  });

  it('names a number that is not finite and the schema\'s other problems together', async () => {
    const dir = archiveWith('groups: []');
    writeFileSync(join(dir, 'reduction.yaml'), 'statistics: {}\nspectrum: { segment: 1024, overlap: .nan }\nspectra: {}\n');
    const message = await errorOf(loadSpec(dir));
    expect(message).toMatch(/reduction\.yaml:2: spectrum\.overlap: must be a finite number[^\n]*\n.*reduction\.yaml:3: spectra: unknown key "spectra"/);
  });

  it('names the line of a YAML syntax error (a tab where YAML wants spaces, YAML 1.2 §6.1)', async () => {
    const dir = archiveWith('groups: []');
    writeFileSync(join(dir, 'reduction.yaml'), 'statistics: {}\nspectrum:\n\tsegment: 4096\n');
    expect(await errorOf(loadSpec(dir))).toMatch(/reduction\.yaml:3: YAML syntax: /);
  });

  it('names the line of a baseline date that is no calendar day, a period that ends before it starts, and an alarm below its warning', async () => {
    const dir = archiveWith('groups: []');
    writeFileSync(join(dir, 'reduction.yaml'), [
      'statistics: {}', //                                      1
      'trends:', //                                             2
      '  baseline:', //                                         3
      '    from: 2026-11-20', //                                4
      '    until: 2026-11-10', //                               5
      '    restart:', //                                        6
      '      - { channel: acc, from: 2026-13-01 }', //          7
      '  limits:', //                                           8
      '    rms: { warn: 5, alarm: 1 }', //                      9
      '',
    ].join('\n'));
    const message = await errorOf(loadSpec(dir));
    expect(message).toMatch(/reduction\.yaml:5: trends\.baseline\.until: must come after from \(2026-11-20\), got 2026-11-10/);
    expect(message).toMatch(/reduction\.yaml:7: trends\.baseline\.restart\[0\]\.from: "2026-13-01" is not a date or date-time on the calendar/);
    expect(message).toMatch(/reduction\.yaml:9: trends\.limits\.rms\.alarm: must be above warn \(5\), got 1/);
  });
});
