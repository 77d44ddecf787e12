// A group of archive.yaml holding a problem costs only its own recordings: the run reduces the other groups, sets the
// group's recordings aside (their stored results kept), names the problem's file, line and key, and uses them once mended. What the run is
// held against here is the README's "Declaring an archive" and a run of the same archive with the broken group left out.
import { cpSync, existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { parquetReadObjects } from 'hyparquet';
import { compressors } from 'hyparquet-compressors';
import { describe, expect, it } from 'vitest';
import { quern, readJson, repo, tempDir } from './helpers.js';

// Two recordings of the sample archive, each in a group of its own: a raw strain file and a short WAV.
const STRAIN = (rateKey: string) => [
  '  - name: frame-strain', //                                        line 2
  '    match: "strain/*.bin"', //                                     3
  '    format: raw', //                                               4
  `    ${rateKey}: 500`, //                                           5
  '    layout: { sample_type: int16, byte_order: big, channels: 2, header_bytes: 32 }',
  '    labels: { bay: 3 }',
  '    channels:',
  '      - { name: strain_a, quantity: strain, unit: µm/m, scale: 2000, range: [-2000, 2000], bits: 16 }',
  '      - { name: strain_b, quantity: strain, unit: µm/m, scale: 2000, range: [-2000, 2000], bits: 16 }',
];
const QUICK_LOOK = [
  '  - name: quick-look',
  '    match: "quicklook/*.wav"',
  '    sample_rate: 2000',
  '    channels:',
  '      - { name: acc_de, quantity: acceleration, unit: m/s^2, scale: 500, range: [-500, 500], bits: 16, max_frequency_hz: 1000 }',
];
const yamlOf = (...groups: string[][]) => ['groups:', ...groups.flat(), ''].join('\n');

function archiveWith(yaml: string): string {
  const dir = join(tempDir(), 'arc');
  mkdirSync(dir);
  for (const folder of ['strain', 'quicklook']) cpSync(join(repo, 'sample-archive', folder), join(dir, folder), { recursive: true });
  writeFileSync(join(dir, 'archive.yaml'), yaml);
  return dir;
}

async function rowsOf(path: string): Promise<Record<string, unknown>[]> {
  const bytes = readFileSync(path);
  return parquetReadObjects({ file: bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer, compressors });
}

describe('a group of archive.yaml holding a problem', () => {
  it('sets its own recordings aside, keeping their stored results, names its problem with file, line and key, reduces the others as a run without it would, and reuses the results once mended', async () => {
    const archive = archiveWith(yamlOf(STRAIN('sample_rate'), QUICK_LOOK)), out = join(archive, '..', 'out');
    const strain = 'strain/2026-11-17_frame-strain.bin', quick = 'quicklook/2026-11-18_quicklook.wav';
    expect(quern('reduce', archive, '--out', out, '--jobs', '1').code).toBe(0);

    // The key misspelt on line 5 of the frame-strain group.
    writeFileSync(join(archive, 'archive.yaml'), yamlOf(STRAIN('sampel_rate'), QUICK_LOOK));
    const r = quern('reduce', archive, '--out', out, '--jobs', '1');
    expect(r.code, r.stdout + r.stderr).toBe(1);
    const run = readJson(join(out, 'run.json'));
    expect(run.recordings.map((x: any) => [x.recording, x.status])).toEqual([[quick, 'reduced']]);
    expect(run.broken_groups).toEqual([{ group: 'frame-strain', line: 2, problems: [expect.stringMatching(/archive\.yaml:5: groups\[0\]\.sampel_rate: unknown key "sampel_rate"; did you mean sample_rate\?/)], recordings: 1 }]);
    // The group named once, on the terminal and in the report.
    expect(r.stdout.match(/DECLARED group frame-strain \(archive\.yaml line 2\) is broken: .*archive\.yaml:5: groups\[0\]\.sampel_rate: unknown key "sampel_rate".*; its 1 recording in this run is set aside \(not reduced, stored results kept\) until it is mended, and then reduced/g)).toHaveLength(1);
    expect(readJson(join(out, 'quality.json')).broken_groups).toEqual(run.broken_groups);
    expect(readFileSync(join(out, 'quality.html'), 'utf8')).toMatch(/<h2>Groups whose declaration is broken<\/h2><ul><li>group frame-strain \(archive\.yaml line 2\) is broken: /);

    // The same archive with the broken group left out: the other group's tables come out the same, row for row.
    const without = archiveWith(yamlOf(QUICK_LOOK)), outWithout = join(without, '..', 'out');
    expect(quern('reduce', without, '--out', outWithout, '--jobs', '1').code).toBe(0);
    for (const table of ['features.parquet', 'windows.parquet']) {
      const [a, b] = [await rowsOf(join(out, table)), await rowsOf(join(outWithout, table))];
      expect(a.length).toBeGreaterThan(0);
      expect(a).toEqual(b);
    }

    // Unmended, the next run sets it aside again, reading nothing.
    const again = quern('reduce', archive, '--out', out, '--jobs', '1');
    expect(again.code).toBe(1);
    expect(readJson(join(out, 'run.json')).broken_groups[0].recordings).toBe(1);

    // Mended, the next run uses the stored result the broken runs kept: nothing is computed again.
    writeFileSync(join(archive, 'archive.yaml'), yamlOf(STRAIN('sample_rate'), QUICK_LOOK));
    const mended = quern('reduce', archive, '--out', out, '--jobs', '1');
    expect(mended.code, mended.stdout + mended.stderr).toBe(0);
    const after = readJson(join(out, 'run.json'));
    expect(after.broken_groups).toEqual([]);
    expect(after.recordings.find((x: any) => x.recording === strain)).toMatchObject({ status: 'reduced', why: 'unchanged', recomputed: [] });
    expect(after.recordings.find((x: any) => x.recording === quick)).toMatchObject({ status: 'reduced', why: 'unchanged', recomputed: [] });
    expect(mended.stdout).not.toMatch(/is broken/);
  });

  it('claims the files its pattern matches, so a later group never reduces them under its own declaration', () => {
    // A reversed range in the first group; a later group would take any raw file.
    const reversed = STRAIN('sample_rate').map((l) => l.replace('{ name: strain_a, quantity: strain, unit: µm/m, scale: 2000, range: [-2000, 2000]', '{ name: strain_a, quantity: strain, unit: µm/m, scale: 2000, range: [2000, -2000]'));
    const anyRaw = ['  - name: any-raw', '    match: "**/*.bin"', '    format: raw', '    sample_rate: 500', '    layout: { sample_type: int16, byte_order: big, channels: 2, header_bytes: 32 }'];
    const archive = archiveWith(yamlOf(reversed, QUICK_LOOK, anyRaw)), out = join(archive, '..', 'out');
    const r = quern('reduce', archive, '--out', out, '--jobs', '1');
    expect(r.code, r.stdout + r.stderr).toBe(1);
    const run = readJson(join(out, 'run.json'));
    expect(run.recordings.map((x: any) => [x.recording, x.group, x.status])).toEqual([['quicklook/2026-11-18_quicklook.wav', 'quick-look', 'reduced']]);
    expect(run.broken_groups).toEqual([{ group: 'frame-strain', line: 2, problems: [expect.stringMatching(/archive\.yaml:9: groups\[0\]\.channels\[0\]\.range: range must be \[lower, upper\] with lower < upper, got \[2000, -2000\]/)], recordings: 1 }]);
    expect(run.unmatched).toEqual([]);
    expect(run.groups_without_recordings).toEqual(['any-raw']);
    expect(r.stdout).toMatch(/group any-raw \(archive\.yaml line 16\) matches no recording of its own: its file is taken by group frame-strain, listed before it, and set aside with that broken declaration until it is mended/);
  });

  it('still stops the run, writing nothing, on a YAML syntax error, a problem outside the groups, two groups of one name, a pattern that cannot be read, or every group broken', () => {
    const cases: [string, RegExp][] = [
      [yamlOf(STRAIN('sample_rate'), QUICK_LOOK).replace('    match: "quicklook/*.wav"', '   match: "quicklook/*.wav"'), /archive\.yaml:\d+: YAML syntax/],
      [`descripton: rig P3\n${yamlOf(STRAIN('sample_rate'), QUICK_LOOK)}`, /archive\.yaml:1: descripton: unknown key "descripton"; did you mean description\?/],
      [yamlOf(STRAIN('sample_rate'), QUICK_LOOK.map((l) => l.replace('quick-look', 'frame-strain'))), /archive\.yaml:11: groups\[1\]\.name: group name "frame-strain" is used twice/],
      [yamlOf(STRAIN('sampel_rate').map((l) => l.replace('match: "strain/*.bin"', 'match: 5')), QUICK_LOOK), /group frame-strain's match pattern cannot be read, so the files it is meant for could fall to another group; a run stops until archive\.yaml line 2 is mended/],
      [yamlOf(STRAIN('sampel_rate')), /no group of archive\.yaml can be used, so a run would reduce nothing/],
    ];
    for (const [yaml, said] of cases) {
      const archive = archiveWith(yaml), out = join(archive, '..', 'out');
      const r = quern('reduce', archive, '--out', out, '--jobs', '1');
      expect(r.code, r.stdout + r.stderr).toBe(2);
      expect(r.stderr).toMatch(said);
      expect(existsSync(join(out, 'run.json'))).toBe(false);
    }
  });

  it('leaves its labels out of the other groups\' case checks: they are reduced, while quern check lists its clash with its problems', async () => {
    // frame-strain is broken (a misspelt key) and labelled "Bay"; quick-look's "bay" would clash with it only if it were usable.
    const yaml = yamlOf(STRAIN('sampel_rate').map((l) => l.replace('labels: { bay: 3 }', 'labels: { Bay: 3 }')), [...QUICK_LOOK.slice(0, 3), '    labels: { bay: 7 }', ...QUICK_LOOK.slice(3)]);
    const archive = archiveWith(yaml), out = join(archive, '..', 'out');
    const run = quern('reduce', archive, '--out', out, '--jobs', '1', '--quiet');
    expect(run.code, run.stdout + run.stderr).toBe(1);
    const record = readJson(join(out, 'run.json'));
    expect(record.broken_groups.map((b: any) => b.group)).toEqual(['frame-strain']);
    expect(record.broken_groups[0].problems.join('\n')).toMatch(/groups\[0\]\.labels\.Bay: label "Bay" differs from the label "bay" of another group only in case/);
    expect(record.recordings.filter((x: any) => x.status === 'reduced').map((x: any) => x.group)).toEqual(expect.arrayContaining(['quick-look']));
    // Its table carries quick-look's label column, as a run of the archive without the broken group writes it.
    expect((await rowsOf(join(out, 'features.parquet'))).every((row) => row.group === 'quick-look' && String(row.bay) === '7')).toBe(true);
    const check = quern('check', archive);
    expect(check.code).toBe(2);
    expect(check.stderr).toMatch(/archive\.yaml:5: groups\[0\]\.sampel_rate: unknown key "sampel_rate"/);
    expect(check.stderr).toMatch(/groups\[0\]\.labels\.Bay: label "Bay" differs from the label "bay" of another group only in case/);
    expect(check.stderr).not.toMatch(/groups\[1\]/);
  });

  it('quern check still lists every problem, in every group, and exits 2', () => {
    const twoBroken = yamlOf(STRAIN('sampel_rate'), QUICK_LOOK.map((l) => l.replace('range: [-500, 500]', 'range: [500, -500]')));
    const r = quern('check', archiveWith(twoBroken));
    expect(r.code, r.stdout + r.stderr).toBe(2);
    expect(r.stderr).toMatch(/archive\.yaml:5: groups\[0\]\.sampel_rate: unknown key "sampel_rate"/);
    expect(r.stderr).toMatch(/archive\.yaml:15: groups\[1\]\.channels\[0\]\.range: range must be \[lower, upper\] with lower < upper, got \[500, -500\]/);
  });
});
