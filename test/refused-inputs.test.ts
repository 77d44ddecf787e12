// Inputs an unattended run must not take at face value: declarations whose numbers are not finite, recordings that hold
// no samples, pipes and devices where recordings are expected. Each is refused by name (file, place, what to do) while the good recordings around it reduce.
import { spawnSync } from 'node:child_process';
import { mkdirSync, readFileSync, symlinkSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { editDistance, nearestNames } from '../pipeline/declare/nearest-names.js';
import { encodeWav } from '../scripts/wav-file.js';
import { quern, quernUnder, quernWithin, readJson, sampleArchiveCopy, tempDir } from './helpers.js';

const CHANNELS = `    channels:
      - { name: a, quantity: acceleration, unit: m/s^2, scale: 10, range: [-10, 10], bits: 16, max_frequency_hz: 1000 }
`;

/** An archive of one group over rec/*.wav (or the files given), with a 1 s two-tone recording `good.wav`. */
function archive(yaml: string, files: Record<string, Buffer | string> = {}): string {
  const root = join(tempDir(), 'archive');
  mkdirSync(join(root, 'rec'), { recursive: true });
  writeFileSync(join(root, 'archive.yaml'), yaml);
  const tone = Float64Array.from({ length: 4000 }, (_, i) => 0.5 * Math.sin((2 * Math.PI * 100 * i) / 4000));
  writeFileSync(join(root, 'rec', 'good.wav'), encodeWav({ sampleRate: 4000, channels: [tone] }));
  for (const [name, bytes] of Object.entries(files)) writeFileSync(join(root, name), bytes);
  return root;
}

describe('declarations with numbers that are not finite', () => {
  // YAML 1.2 reads .inf, .nan and 1e400 as numbers (the core schema's float), so the schema's "number" lets them pass.
  it.each([
    ['sample_rate: .inf', 4, 'groups[0].sample_rate'],
    ['sample_rate: 1e400', 4, 'groups[0].sample_rate'],
  ])('refuses %s in archive.yaml, naming the line and key', (line, at, key) => {
    const root = archive(`groups:\n  - name: g\n    match: "rec/*.wav"\n    ${line}\n${CHANNELS}`);
    for (const command of ['check', 'reduce']) {
      const r = quern(command, root);
      expect(r.code, r.stdout + r.stderr).toBe(2);
      expect(r.stderr).toContain(`archive.yaml:${at}: ${key}: must be a finite number`);
    }
  });

  it('refuses a scale or offset of .inf or .nan, which would turn every sample into a fault of the sensor', () => {
    const root = archive('groups:\n  - name: g\n    match: "rec/*.wav"\n    channels:\n      - { name: a, scale: 1e400 }\n  - name: h\n    match: "other/*.wav"\n    channels:\n      - { name: b, offset: .nan }\n');
    const r = quern('reduce', root);
    expect(r.code, r.stdout + r.stderr).toBe(2);
    expect(r.stderr).toContain('archive.yaml:5: groups[0].channels[0].scale: must be a finite number');
    expect(r.stderr).toContain('archive.yaml:9: groups[1].channels[0].offset: must be a finite number');
  });

  it('refuses .nan in reduction.yaml, naming the line and key', () => {
    const root = archive(`groups:\n  - name: g\n    match: "rec/*.wav"\n${CHANNELS}`, { 'reduction.yaml': 'statistics: {}\nspectrum: { segment: 1024, overlap: .nan }\n' });
    const r = quern('reduce', root);
    expect(r.code, r.stdout + r.stderr).toBe(2);
    expect(r.stderr).toContain('reduction.yaml:2: spectrum.overlap: must be a finite number');
  });
});

describe('recordings that hold no samples', () => {
  const yaml = `groups:\n  - name: g\n    match: "rec/*.wav"\n    sample_rate: 4000\n${CHANNELS}  - name: c\n    match: "rec/*.csv"\n    sample_rate: 100\n`;
  // A RIFF/WAVE file whose data chunk holds 0 frames (a capture stopped before its first sample), and a CSV of a header only.
  const files = { 'rec/empty.wav': encodeWav({ sampleRate: 4000, channels: [new Float64Array(0)] }), 'rec/header-only.csv': 'a,b\n' };

  it('fails each as a recording, with what to do, and reduces the others', () => {
    const root = archive(yaml, files);
    const r = quern('reduce', root, '--log', 'plain');
    expect(r.code, r.stdout + r.stderr).toBe(1);
    const run = readJson(join(`${root}.reduced`, 'run.json'));
    const status = Object.fromEntries(run.recordings.map((x: any) => [x.recording, x]));
    expect(status['rec/good.wav'].status).toBe('reduced');
    for (const name of ['rec/empty.wav', 'rec/header-only.csv']) {
      expect(status[name].status).toBe('failed');
      expect(status[name].reason).toMatch(/holds no samples.*check the logger/);
    }
  });

  it('check says so for the WAV, whose header gives the frame count', () => {
    const root = archive(yaml, files);
    const r = quern('check', root);
    expect(r.code, r.stdout + r.stderr).toBe(1);
    expect(r.stdout).toMatch(/FAILED\s+rec\/empty\.wav.*holds no samples/);
  });
});

describe('entries that are not files of samples', () => {
  /** The built command under a time limit: a reader waiting on a pipe must show as a failed test, not a stuck suite. */
  const bounded = (...args: string[]) => {
    const r = quernWithin(60_000, ...args);
    return { ...r, timedOut: r.signal === 'SIGTERM' };
  };
  /** An archive holding a good recording, a named pipe and a link to an endless device, all matched by the group. */
  function specialArchive(): string {
    const root = archive(`groups:\n  - name: g\n    match: "rec/*.wav"\n${CHANNELS}`);
    // mkfifo (coreutils, part of every base system) is the only way to make a named pipe: Node has no call for it.
    expect(spawnSync('mkfifo', [join(root, 'rec', 'pipe.wav')]).status).toBe(0);
    symlinkSync('/dev/zero', join(root, 'rec', 'endless.wav'));
    return root;
  }

  it('fails each by name, with what to do, in bounded time, with and without --hash', () => {
    const root = specialArchive();
    for (const extra of [[], ['--hash']]) {
      const r = bounded('reduce', root, '--log', 'plain', ...extra);
      expect(r.timedOut, 'the run hung').toBe(false);
      expect(r.code, r.stdout + r.stderr).toBe(1);
      const status = Object.fromEntries(readJson(join(`${root}.reduced`, 'run.json')).recordings.map((x: any) => [x.recording, x]));
      expect(status['rec/good.wav'].status).toBe('reduced');
      expect(status['rec/pipe.wav'].reason).toMatch(/pipe\.wav is a named pipe \(FIFO\), not a file.*copy the recording into a file or remove/);
      expect(status['rec/endless.wav'].reason).toMatch(/endless\.wav is a device, not a file.*copy the recording into a file or remove/);
    }
  });

  it('check and peek say so rather than wait on the pipe', () => {
    const root = specialArchive();
    const check = bounded('check', root);
    expect(check.timedOut, 'check hung').toBe(false);
    expect(check.code).toBe(1);
    expect(check.stdout).toMatch(/FAILED\s+rec\/pipe\.wav.*named pipe/);
    const peek = bounded('peek', join(root, 'rec', 'pipe.wav'));
    expect(peek.timedOut, 'peek hung').toBe(false);
    expect(peek.stderr).toMatch(/named pipe \(FIFO\), not a file/);
  });
});

describe('file names the file system gives back other than they are stored', () => {
  it('a name that is not UTF-8 (a Latin-1 "ü") fails as its recording, saying to rename it, and the others reduce', () => {
    const root = archive(`groups:\n  - name: g\n    match: "rec/*.wav"\n${CHANNELS}`);
    // Node hands such a name back with U+FFFD in place of the byte, a path that then leads nowhere.
    writeFileSync(Buffer.concat([Buffer.from(join(root, 'rec', 'pr')), Buffer.from([0xfc]), Buffer.from('fstand.wav')]), readFileSync(join(root, 'rec', 'good.wav')));
    const r = quern('reduce', root, '--log', 'plain');
    expect(r.code, r.stdout + r.stderr).toBe(1);
    const status = Object.fromEntries(readJson(join(`${root}.reduced`, 'run.json')).recordings.map((x: any) => [x.recording, x]));
    expect(status['rec/good.wav'].status).toBe('reduced');
    expect(status['rec/pr\uFFFDfstand.wav'].reason).toMatch(/file name is not valid UTF-8.*rename it/);
  });
});

describe('reduction specs the schema cannot judge', () => {
  const specRun = (spec: string) => {
    const root = archive(`groups:\n  - name: g\n    match: "rec/*.wav"\n${CHANNELS}`, { 'reduction.yaml': spec });
    return quern('reduce', root, '--log', 'plain');
  };

  it('refuses a Welch segment that is not a power of two, or too long to hold, before any recording fails', () => {
    for (const n of [3000, 2 ** 27]) {
      const r = specRun(`statistics: {}\nspectrum: { segment: ${n} }\n`);
      expect(r.code, r.stdout + r.stderr).toBe(2);
      expect(r.stderr).toContain(`reduction.yaml:2: spectrum.segment: must be a power of two from 16 to 1048576, got ${n}`);
      expect(r.stderr).not.toMatch(/unexpected error|    at /);
    }
  });

  it('refuses an MTVV integration time whose running window no channel could hold, before any recording fails', () => {
    // ISO 2631-1 defines MTVV over 1 s running windows (from memory); 1e6 s at 4 kHz would be a 32 GB window per channel.
    const r = specRun('statistics: {}\nmtvv: { integration_s: 1e6 }\n');
    expect(r.code, r.stdout + r.stderr).toBe(2);
    expect(r.stderr).toContain('reduction.yaml:2: mtvv.integration_s: must be at most 10 s (ISO 2631-1 integrates over 1 s), got 1000000');
    expect(r.stderr).not.toMatch(/unexpected error|    at /);
    expect(specRun('statistics: {}\nmtvv: { integration_s: 10 }\n').code).toBe(0);
  });

  it('refuses trends watching a column that does not exist, naming the nearest ones, but not a default one the spec leaves off', () => {
    const r = specRun(['statistics: {}', 'bands: [[20, 200]]', 'trends:', '  features: [rms, krtosis, "bnd_*_rms", band_*_rms]'].join('\n') + '\n');
    expect(r.code, r.stdout + r.stderr).toBe(2);
    expect(r.stderr).toContain('reduction.yaml:4: trends.features[1]: "krtosis" matches no feature column of this spec (nearest: kurtosis, ');
    expect(r.stderr).toMatch(/reduction\.yaml:4: trends\.features\[2\]: "bnd_\*_rms" matches no feature column of this spec \(nearest: [^)]*band_20_200_rms/);
    expect(r.stderr).toContain('name a column of features.parquet or a glob over them, or turn on the section that computes it');
    expect(r.stderr).not.toMatch(/features\[0\]|features\[3\]/);
    // env_rms is in the default list, watched where present: a spec without envelope still runs.
    const quiet = specRun('statistics: {}\ntrends:\n  features: [rms, env_rms]\n');
    expect(quiet.code, quiet.stdout + quiet.stderr).toBe(0);
  });

  it('refuses limits on a column that does not exist with file, line and key, naming the nearest ones', () => {
    const r = specRun(['statistics: {}', 'velocity_bands: [[10, 1000]]', 'trends:', '  limits:', '    velocity_10_1000_rms: { warn: 4.5 }', '    velocity_10_100_rms: { alarm: 7.1 }'].join('\n') + '\n');
    expect(r.code, r.stdout + r.stderr).toBe(2);
    expect(r.stderr).toContain('reduction.yaml:6: trends.limits.velocity_10_100_rms: no feature column of this spec is named "velocity_10_100_rms" (nearest: velocity_10_1000_rms, ');
    expect(r.stderr).toContain('name a column of features.parquet, or turn on the section that computes it');
    expect(r.stderr).not.toMatch(/limits\.velocity_10_1000_rms|unexpected error|    at /);
  });

  it('refuses a figure asked for twice with file, line and key before any work, not by a crash at the end: a band, an order, a time constant, octave sets', () => {
    const cases: [string, RegExp][] = [
      ['bands: [[20, 200], [20.0, 200]]', /reduction\.yaml:2: bands: would make the columns band_20_200_ms, band_20_200_rms more than once/],
      ['orders: { orders: [1, 1, 2] }', /reduction\.yaml:2: orders: would make the column order_1_rms more than once/],
      ['time_weighting_s: [1, 1.0]', /reduction\.yaml:2: time_weighting_s: would make the column max_twrms_1000ms more than once/],
      ['octave_bands: [{ fraction: 1, from: 31.5, to: 8000 }, { fraction: 1, from: 63, to: 250 }]', /reduction\.yaml:2: octave_bands: would make the columns oct1_63_rms, oct1_125_rms, oct1_250_rms more than once/],
    ];
    for (const [line, said] of cases) {
      const r = specRun(`statistics: {}\n${line}\n`);
      expect(r.code, r.stdout + r.stderr).toBe(2);
      expect(r.stderr).toMatch(said);
      expect(r.stderr).not.toMatch(/unexpected error|    at |Terminating worker/);
    }
  });

  it('refuses reversed bands, octave sets and envelope band edges, which would read 0 or nothing without a word', () => {
    const r = specRun([
      'bands: [[20, 200], [200, 20]]', //                                          1
      'velocity_bands: { ranges: [[1000, 10]] }', //                               2
      'octave_bands: [{ fraction: 1, from: 8000, to: 31.5 }]', //                  3
      'envelope: { filter: { kind: bandpass, order: 4, low_hz: 500, high_hz: 100 } }', // 4
    ].join('\n') + '\n');
    expect(r.code, r.stdout + r.stderr).toBe(2);
    expect(r.stderr).toContain('reduction.yaml:1: bands[1]: must be [low, high] with low < high, got [200, 20]');
    expect(r.stderr).toContain('reduction.yaml:2: velocity_bands.ranges[0]: must be [low, high] with low < high, got [1000, 10]');
    expect(r.stderr).toContain('reduction.yaml:3: octave_bands[0]: from must be below to, got 8000 and 31.5');
    expect(r.stderr).toContain('reduction.yaml:4: envelope.filter: low_hz must be below high_hz, got 500 and 100');
  });
});

describe('a fault in quern where no caller waits', () => {
  it('ends the run with exit code 2 and the report message, not Node\'s exit code 1, and the next run goes on', () => {
    const archive = sampleArchiveCopy(), out = join(tempDir(), 'out');
    // A fault planted in a timer once the run has stored its first results (so its lock names it): thrown where no caller of quern's awaits it.
    const planted = `--import=data:text/javascript,import fs from "node:fs";setInterval(()=>{if(fs.existsSync("${join(out, 'cache', 'entries.pack')}"))throw new Error("planted fault")},10).unref()`;
    const r = quernUnder([planted], 'reduce', archive, '--out', out, '--jobs', '1', '--quiet');
    expect(r.code, r.stderr).toBe(2);
    // Where the outputs stand is said as it is: this first run had none, and its stored results and lock are dealt with.
    expect(r.stderr).toMatch(/^quern: stopped by an unexpected error; the outputs are as they were before the run, and the results stored so far are kept for the next run; its temporary files and lock are removed\. Please report it with what follows:\nError: planted fault/);
    const next = quern('reduce', archive, '--out', out, '--jobs', '1', '--quiet');
    expect(next.code, next.stderr).toBe(1); // the sample archive plants a truncated recording
    // The lock was released, so the next run took none over.
    expect(readJson(join(out, 'run.json')).lock.took_over).toBeNull();
  });
});

describe('nearest names', () => {
  it('measures the Levenshtein distance of the textbook examples (kitten → sitting 3, flaw → lawn 2; from memory)', () => {
    expect(editDistance('kitten', 'sitting')).toBe(3);
    expect(editDistance('flaw', 'lawn')).toBe(2);
    expect(editDistance('', 'rms')).toBe(3);
    expect(nearestNames('krtosis', ['rms', 'kurtosis', 'skewness'], 2)).toEqual(['kurtosis', 'rms']);
  });
});
