// Slips of the command line said as such: what was given, what it is, and what to give instead (exit code 2, README's table).
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { fixture, quern, sampleArchiveCopy, tempDir } from './helpers.js';

describe('slips of the command line', () => {
  it('a file given for an archive folder is named a file, with what to give instead', () => {
    const archive = sampleArchiveCopy();
    const yaml = quern('reduce', join(archive, 'archive.yaml'), '--quiet');
    expect(yaml.code).toBe(2);
    expect(yaml.stderr).toBe(`quern: ${join(archive, 'archive.yaml')} is a file, not an archive folder: give its folder, ${archive}\n`);
    const wav = fixture('wav', 'pcm16-2ch.wav');
    const check = quern('check', wav);
    expect(check.code).toBe(2);
    expect(check.stderr).toBe(`quern: ${wav} is a file, not an archive folder: give the folder that holds archive.yaml (quern peek ${wav} shows one recording)\n`);
  });

  it('a command a slip away from one is named with it; a word near none is left to the parser', () => {
    const slip = quern('reduc', 'A');
    expect(slip.code).toBe(2);
    expect(slip.stderr).toBe('quern: "reduc" is not a command of quern; did you mean reduce? (the commands: reduce, merge, export, check, peek; quern --help lists them)\n');
    expect(quern('chekc', 'A').stderr).toMatch(/did you mean check\?/); // two letters swapped: Levenshtein distance 2
    const other = quern('frobnicate', 'A');
    expect(other.code).toBe(2);
    expect(other.stderr).toMatch(/Unknown arguments: frobnicate, A/);
  });

  it('peek on a file that is not there, or a raw file without its layout, is a usage error', () => {
    const missing = join(tempDir(), 'gone.wav');
    const gone = quern('peek', missing);
    expect(gone.code).toBe(2);
    expect(gone.stderr).toBe(`quern: ${missing}: no such file; name a recording (quern check <archive> lists an archive's)\n`);
    const raw = join(tempDir(), 'capture.bin');
    writeFileSync(raw, Buffer.alloc(400));
    const bare = quern('peek', raw);
    expect(bare.code).toBe(2);
    expect(bare.stderr).toBe(`quern: ${raw}: raw binary needs its layout and sample rate; give it with --sample-type, --channels and --sample-rate (and --byte-order, --header-bytes)\n`);
    // Given them, the same file is read: 400 zero bytes as 2 int16 channels are 100 frames, 0.1 s at 1 kHz (by hand).
    const given = quern('peek', raw, '--sample-type', 'int16', '--channels', '2', '--sample-rate', '1000');
    expect(given.code, given.stderr).toBe(0);
    expect(given.stdout).toMatch(/duration\s+0\.100 s \(100 frames\)/);
  });

  it('a dataset not in an HDF5 file is named with the datasets the file holds', () => {
    // h5py wrote /data, float32 of shape (3, 2500) (test/fixtures/make-format-fixtures.py); /acq/signals, int16 (3000, 4) the other file.
    const columns = quern('peek', fixture('formats', 'acq-columns.h5'), '--dataset', '/signals');
    expect(columns.stderr).toContain('dataset "/signals" is not in the file; the file holds /data (3 × 2500); check --dataset');
    const rows = quern('peek', fixture('formats', 'acq-rows.h5'), '--dataset', '/signals');
    expect(rows.stderr).toContain('dataset "/signals" is not in the file; the file holds /acq/signals (3000 × 4); check --dataset');
  });

  it('--exit-on quiet without a period is refused: a group is quiet only over one', () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    const r = quern('reduce', archive, '--out', out, '--exit-on', 'alarm,quiet', '--quiet');
    expect(r.code).toBe(2);
    expect(r.stderr).toBe('quern: --exit-on quiet: a group is named quiet only over a period (--since, --until), so without one it could never fire; add --since (7d, say) or drop quiet\n');
  });
});
