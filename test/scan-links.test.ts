// Archives put together from symbolic links: linked files and folders are reduced like the real ones, loops of links end,
// the output folder stays out however it is reached, and a link that leads nowhere fails as one recording, named.
// Real files and real links in a temporary folder; recordings are sox-made fixtures (test/fixtures/wav, make-fixtures.py).
import { copyFileSync, mkdirSync, statSync, symlinkSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { describe, expect, it } from 'vitest';
import { loadArchiveDeclaration } from '../pipeline/declare/declare.js';
import { scan } from '../pipeline/select/scan.js';
import { explainLink } from '../stages/read/explain-link.js';
import { fixture, quern, readJson, tempDir } from './helpers.js';

const DECLARATION = 'groups:\n  - name: rig\n    match: "**/*.wav"\n';

/** An archive folder with the declaration, beside a "shared" folder that links may point into. */
function layout(): { root: string; shared: string } {
  const base = tempDir('quern-links-');
  const root = join(base, 'archive'), shared = join(base, 'shared');
  mkdirSync(root);
  mkdirSync(shared);
  writeFileSync(join(root, 'archive.yaml'), DECLARATION);
  return { root, shared };
}

const put = (name: string, to: string) => copyFileSync(fixture('wav', name), to);

async function scanned(root: string, exclude: string[] = []) {
  const r = await scan(root, await loadArchiveDeclaration(root), { exclude });
  return { ...r, names: r.recordings.map((x) => x.recording).sort() };
}

async function features(out: string): Promise<Record<string, any>[]> {
  const db = await (await DuckDBInstance.create()).connect();
  return (await db.runAndReadAll(`select * from '${join(out, 'features.parquet')}' order by recording, channel`)).getRowObjectsJson() as Record<string, any>[];
}

const failures = (out: string) => Object.fromEntries((readJson(join(out, 'run.json')).recordings as { recording: string; status: string; reason: string }[])
  .filter((r) => r.status === 'failed').map((r) => [r.recording, r.reason]));

describe('scanning links', () => {
  it('takes a linked file as a recording under the link\'s name, with the size and modification time of its target', async () => {
    const { root, shared } = layout();
    put('pcm16-2ch.wav', join(shared, 'night.wav'));
    symlinkSync(join(shared, 'night.wav'), join(root, 'night.wav'));
    const s = await scanned(root);
    expect(s.names).toEqual(['night.wav']);
    const target = statSync(join(shared, 'night.wav'));
    expect(s.recordings[0]).toMatchObject({ size: target.size, mtimeMs: target.mtimeMs, path: join(root, 'night.wav') });
  });

  it('walks a linked folder; a folder reached both plainly and through a link keeps its plain name, once', async () => {
    const { root, shared } = layout();
    mkdirSync(join(shared, 'day-1'));
    put('pcm16-2ch.wav', join(shared, 'day-1', 'a.wav'));
    symlinkSync(join(shared, 'day-1'), join(root, 'day-1'));
    mkdirSync(join(root, 'nightly', 'day-2'), { recursive: true });
    put('pcm16-2ch.wav', join(root, 'nightly', 'day-2', 'b.wav'));
    // A "latest" link sorts before the folder it points to; the folder must still be walked under its own name.
    symlinkSync(join(root, 'nightly', 'day-2'), join(root, 'latest'));
    expect((await scanned(root)).names).toEqual(['day-1/a.wav', 'nightly/day-2/b.wav']);
  });

  it('ends on loops of folder links and takes each real recording once', async () => {
    const { root, shared } = layout();
    mkdirSync(join(root, 'rig'));
    put('pcm16-2ch.wav', join(root, 'rig', 'r.wav'));
    symlinkSync('..', join(root, 'rig', 'up')); // to the archive itself
    symlinkSync(join(root, '..'), join(root, 'base')); // to the folder holding the archive
    for (const [from, to] of [['s1', 's2'], ['s2', 's1']]) {
      mkdirSync(join(shared, from));
      put('pcm16-2ch.wav', join(shared, from, `${from}.wav`));
      symlinkSync(join('..', to), join(shared, from, 'next')); // two folders linking to each other
    }
    symlinkSync(join(shared, 's1'), join(root, 's'));
    symlinkSync('knot-b', join(root, 'knot-a')); // two links pointing at each other: no target at all
    symlinkSync('knot-a', join(root, 'knot-b'));
    const s = await scanned(root);
    expect(s.names).toEqual(['rig/r.wav', 's/next/s2.wav', 's/s1.wav']);
    expect(s.otherFiles).toBe(2); // the knotted links, which look like no recording
  });

  it('does not scan the output folder when a link leads into it, nor links with hidden names', async () => {
    const { root, shared } = layout();
    const out = join(root, '..', 'archive.reduced');
    mkdirSync(out);
    put('pcm16-2ch.wav', join(out, 'stray.wav'));
    symlinkSync(out, join(root, 'results'));
    put('pcm16-2ch.wav', join(shared, 'hidden.wav'));
    symlinkSync(join(shared, 'hidden.wav'), join(root, '.hidden.wav'));
    put('pcm16-2ch.wav', join(root, 'kept.wav'));
    expect((await scanned(root, [out])).names).toEqual(['kept.wav']);
    // The output folder inside the archive, excluded by a path that itself runs through a link.
    mkdirSync(join(root, 'out'));
    put('pcm16-2ch.wav', join(root, 'out', 'stray.wav'));
    symlinkSync(root, join(shared, 'via'));
    expect((await scanned(root, [join(shared, 'via', 'out')])).names).toEqual(['kept.wav', 'results/stray.wav']);
  });

  it('keeps a link that leads nowhere: a recording when a group claims it, else reported as unmatched', async () => {
    const { root, shared } = layout();
    writeFileSync(join(root, 'archive.yaml'), 'groups:\n  - name: rig\n    match: "rig/*.wav"\n');
    mkdirSync(join(root, 'rig'));
    symlinkSync(join(shared, 'gone.wav'), join(root, 'rig', 'gone.wav'));
    symlinkSync(join(shared, 'gone.wav'), join(root, 'stray.wav'));
    const s = await scanned(root);
    expect(s.names).toEqual(['rig/gone.wav']);
    expect(s.unmatched).toEqual(['stray.wav']);
  });
});

describe('reducing an archive of links', () => {
  it('gives a linked recording the figures of the same file copied in place, and a linked folder\'s too', async () => {
    const { root, shared } = layout();
    put('pcm24-3ch.wav', join(root, 'copied.wav'));
    put('pcm24-3ch.wav', join(shared, 'night.wav'));
    symlinkSync(join(shared, 'night.wav'), join(root, 'linked.wav'));
    mkdirSync(join(shared, 'day'));
    put('pcm16-2ch.wav', join(shared, 'day', 'short.wav'));
    symlinkSync(join(shared, 'day'), join(root, 'day'));
    const out = join(root, '..', 'out');
    const r = quern('reduce', root, '--out', out, '--quiet', '--jobs', '1');
    expect(r.code, r.stderr).toBe(0);
    const rows = await features(out);
    expect([...new Set(rows.map((x) => x.recording))]).toEqual(['copied.wav', 'day/short.wav', 'linked.wav']);
    const without = (rec: string) => rows.filter((x) => x.recording === rec).map(({ recording, ...rest }) => rest);
    expect(without('linked.wav').length).toBe(3);
    expect(without('linked.wav')).toEqual(without('copied.wav'));
    // The linked folder's recording against its samples as sox wrote them (pcm16-2ch.wav.expected.json).
    const ref = readJson(fixture('wav', 'pcm16-2ch.wav.expected.json')) as { channels: number[][] };
    const rms = (xs: number[]) => Math.sqrt(xs.reduce((s, x) => s + x * x, 0) / xs.length);
    const short = rows.filter((x) => x.recording === 'day/short.wav');
    short.forEach((row, c) => expect(row.rms).toBeCloseTo(rms(ref.channels[c]), 9));
  });

  it('fails a link to a missing target as one recording, naming the link and its target, and reduces the rest', async () => {
    const { root, shared } = layout();
    put('pcm16-2ch.wav', join(root, 'good.wav'));
    symlinkSync(join(shared, 'gone.wav'), join(root, 'gone.wav'));
    symlinkSync('knot.wav', join(root, 'knot.wav')); // a link to itself
    const out = join(root, '..', 'out');
    const first = quern('reduce', root, '--out', out, '--quiet', '--jobs', '1');
    expect(first.code, first.stderr).toBe(1);
    const failed = failures(out);
    expect(Object.keys(failed).sort()).toEqual(['gone.wav', 'knot.wav']);
    expect(failed['gone.wav']).toBe(`the symbolic link ${join(root, 'gone.wav')} points to ${join(shared, 'gone.wav')}, where nothing is found (the target is missing); restore the target, point the link at the recording (ln -sfn TARGET LINK) or remove the link`);
    expect(failed['knot.wav']).toMatch(/symbolic link .*knot\.wav points to .*knot\.wav, which leads round a loop of links; restore the target/);
    expect((await features(out)).map((x) => x.recording)).toEqual(['good.wav', 'good.wav']);
    // Run again, holding files against their content: the links still fail alone, the run does not stop.
    const firstRun = readJson(join(out, 'run.json')).run_id;
    const again = quern('reduce', root, '--out', out, '--quiet', '--jobs', '1', '--hash');
    expect(again.code, again.stderr).toBe(1);
    expect(again.stderr).not.toMatch(/ENOENT/);
    expect(readJson(join(out, 'run.json')).run_id).not.toBe(firstRun);
    expect(Object.keys(failures(out)).sort()).toEqual(['gone.wav', 'knot.wav']);
    // check names it the same way.
    const checked = quern('check', root);
    expect(checked.stdout).toContain(`FAILED  gone.wav  [rig]  the symbolic link ${join(root, 'gone.wav')} points to ${join(shared, 'gone.wav')}`);
    // Once the target is there, the recording is reduced.
    put('pcm16-2ch.wav', join(shared, 'gone.wav'));
    const mended = quern('reduce', root, '--out', out, '--quiet', '--jobs', '1');
    expect(Object.keys(failures(out))).toEqual(['knot.wav']);
    expect(mended.code).toBe(1);
    expect((await features(out)).filter((x) => x.recording === 'gone.wav').length).toBe(2);
  });

  it('tells a target this process may not read from a missing one, and leaves files that are not links to their readers', async () => {
    // The tests may run as root, which reads every file: the open's error code is given here as the system reports it.
    const { root, shared } = layout();
    put('pcm16-2ch.wav', join(shared, 'locked.wav'));
    symlinkSync(join(shared, 'locked.wav'), join(root, 'locked.wav'));
    const denied = Object.assign(new Error('EACCES: permission denied'), { code: 'EACCES' });
    expect((await explainLink(join(root, 'locked.wav'), denied))?.message).toBe(`the symbolic link ${join(root, 'locked.wav')} points to ${join(shared, 'locked.wav')}, which this process may not read; give this process read access to the target (and search access to its folders) or remove the link`);
    expect(await explainLink(join(shared, 'locked.wav'), denied)).toBeNull();
  });
});
