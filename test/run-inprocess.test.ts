// The run composed in-process: real worker threads, the same rows whatever the number of workers.
import { existsSync, mkdirSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { runReduce } from '../pipeline/run.js';
import { makeSampleArchive } from '../scripts/make-sample-archive.js';
import { repo, sampleArchiveCopy, tempDir } from './helpers.js';

describe('runReduce', () => {
  it('gives identical tables with one worker and with two', async () => {
    const archive = sampleArchiveCopy();
    const { record: one } = await runReduce({ archive, out: join(archive, '..', 'one'), jobs: 1 });
    const { record: two } = await runReduce({ archive, out: join(archive, '..', 'two'), jobs: 2 });
    expect(one.counts).toEqual(two.counts);
    const strip = (r: typeof one) => r.recordings.map(({ seconds, ...rest }) => rest);
    expect(strip(one)).toEqual(strip(two));
    // The files differ only in their run ids; the Parquet payload before the footer is identical.
    const a = readFileSync(join(archive, '..', 'one', 'features.parquet')), b = readFileSync(join(archive, '..', 'two', 'features.parquet'));
    expect(a.length).toBe(b.length);
  });

  it('reduces an archive with no recordings yet: empty tables, nothing failed', async () => {
    const archive = join(tempDir(), 'empty');
    mkdirSync(archive);
    writeFileSync(join(archive, 'archive.yaml'), 'groups:\n  - name: rig\n    match: "*.wav"\n');
    const out = join(archive, '..', 'out');
    const { record } = await runReduce({ archive, out, jobs: 1 });
    expect(record.counts.selected).toBe(0);
    expect(record.counts.failed).toBe(0);
    for (const f of ['features.parquet', 'run.json', 'quality.json', 'cache/trends.json']) expect(existsSync(join(out, f)), f).toBe(true);
  });
});

describe('sample archive', () => {
  it('is exactly what its deterministic generator makes', () => {
    const dir = join(tempDir(), 'gen');
    makeSampleArchive(dir);
    const list = (root: string, rel = ''): string[] => readdirSync(join(root, rel), { withFileTypes: true }).flatMap((e) => (e.isDirectory() ? list(root, join(rel, e.name)) : [join(rel, e.name)])).sort();
    const files = list(join(repo, 'sample-archive'));
    expect(list(dir)).toEqual(files);
    for (const f of files) expect(readFileSync(join(dir, f)).equals(readFileSync(join(repo, 'sample-archive', f))), f).toBe(true);
  });
});
