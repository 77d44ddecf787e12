// The command a run records for running it again: every option as given, each word quoted for a POSIX shell where
// needed. Checked against the shell itself: sh (dash, or whatever /bin/sh is) splits the string back into the same words.
import { spawn, spawnSync } from 'node:child_process';
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { reduceWords, shellCommand, shellWord } from '../pipeline/rerun-command.js';
import { oneRigArchive, quern, readJson, repo, tempDir } from './helpers.js';
import { encodeWav } from '../scripts/wav-file.js';

/** The words a POSIX shell makes of `command` (IEEE Std 1003.1, Shell Command Language 2.2 and 2.6: quoting, field splitting). */
function shellSplits(command: string): string[] {
  const r = spawnSync('sh', ['-c', `set -- ${command}; for w in "$@"; do printf '%s\\0' "$w"; done`], { encoding: 'utf8' });
  expect(r.status, r.stderr).toBe(0);
  return r.stdout.split('\0').slice(0, -1);
}

describe('a word quoted for a POSIX shell', () => {
  const words = ['plain', '/tmp/arch one', "it's", "''", 'a"b', '$HOME', '`id`', '*.wav', '~', 'a\\b', 'line\nbreak', 'tab\there', '', '-x', 'ümlaut', '2/2', 'a;b|c&d', '#not a comment', "'", 'x=1'];
  it('parses back to itself, one word each', () => {
    for (const w of words) expect(shellSplits(shellWord(w)), JSON.stringify(w)).toEqual([w]);
    expect(shellSplits(shellCommand(words))).toEqual(words);
  });
  it('is left bare when it holds only safe characters, and in single quotes otherwise', () => {
    expect(shellWord('/data/arch/reduction.yaml')).toBe('/data/arch/reduction.yaml');
    expect(shellWord('/tmp/arch one')).toBe("'/tmp/arch one'");
    expect(shellWord("it's")).toBe("'it'\\''s'");
  });
});

describe('the command a reduce records', () => {
  it('names every option given, the period in UTC', () => {
    const words = reduceWords('/a b/arch', {
      out: '/a b/out', spec: '/a b/spec.yaml', jobs: 3, force: true, hash: true, retryFailed: true, shard: { k: 2, n: 2 }, since: Date.UTC(2026, 2, 1), until: Date.UTC(2026, 2, 8),
      settle: '2m', staleLockAfter: '12h', stallLimit: '90s', storageLimit: '2m', exitOn: 'alarm,quiet', log: 'json', quiet: true, export: 'csv', bom: true, decimalComma: true, digits: 6, wide: true,
    });
    expect(words).toEqual(['quern', 'reduce', '/a b/arch', '--out', '/a b/out', '--spec', '/a b/spec.yaml', '--since', '2026-03-01T00:00:00.000Z', '--until', '2026-03-08T00:00:00.000Z',
      '--force', '--hash', '--retry-failed', '--settle', '2m', '--jobs', '3', '--stale-lock-after', '12h', '--stall-limit', '90s', '--storage-limit', '2m', '--exit-on', 'alarm,quiet', '--log', 'json', '--quiet',
      '--export', 'csv', '--bom', '--decimal-comma', '--digits', '6', '--wide', '--shard', '2/2']);
  });

  it('a shard that failed on its spec keeps the command with --spec and the rest, which a shell parses back', () => {
    const root = join(tempDir(), "lab's data"), archive = join(root, 'arch one'), out = join(root, 'out put');
    mkdirSync(join(archive, 'rig'), { recursive: true });
    writeFileSync(join(archive, 'archive.yaml'), oneRigArchive(2000));
    writeFileSync(join(archive, 'rig', 'a.wav'), encodeWav({ sampleRate: 2000, channels: [new Float64Array(2000)], encoding: 'pcm16' }));
    const spec = join(root, 'night spec.yaml');
    // A night that went well, then one whose spec the run refuses.
    writeFileSync(spec, 'statistics: {}\n');
    expect(quern('reduce', archive, '--out', out, '--spec', spec, '--shard', '2/2', '--jobs', '1', '--quiet').code).toBe(0);
    writeFileSync(spec, 'statistics: {}\nno_such_section: {}\n');
    const r = quern('reduce', archive, '--out', out, '--spec', spec, '--shard', '2/2', '--jobs', '1', '--settle', '2m', '--exit-on', 'alarm', '--log', 'plain', '--stall-limit', '90s');
    expect(r.code, r.stderr).toBe(2);
    const start = readJson(join(out, 'parts', 'started-2-of-2.json'));
    expect(start.failed).toMatch(/no_such_section/);
    const command = start.command as string;
    expect(shellSplits(command)).toEqual(['quern', 'reduce', archive, '--out', out, '--spec', spec, '--settle', '2m', '--jobs', '1', '--stall-limit', '90s', '--exit-on', 'alarm', '--log', 'plain', '--shard', '2/2']);
  });
});

describe('the command a run records carries only the options given', () => {
  /** An archive of one recording, and an output folder beside it. */
  function oneRecording() {
    const root = tempDir(), archive = join(root, 'arch'), out = join(root, 'out');
    mkdirSync(join(archive, 'rig'), { recursive: true });
    writeFileSync(join(archive, 'archive.yaml'), oneRigArchive(2000));
    writeFileSync(join(archive, 'rig', 'a.wav'), encodeWav({ sampleRate: 2000, channels: [new Float64Array(2000)], encoding: 'pcm16' }));
    return { archive, out };
  }

  it('a shard given no --jobs keeps none; one given --jobs, or an option at its default value, keeps it', () => {
    const { archive, out } = oneRecording();
    expect(quern('reduce', archive, '--out', out, '--shard', '1/2', '--quiet').code).toBe(0);
    expect(shellSplits(readJson(join(out, 'parts', 'started-1-of-2.json')).command)).toEqual(['quern', 'reduce', archive, '--out', out, '--quiet', '--shard', '1/2']);
    expect(quern('reduce', archive, '--out', out, '--shard', '2/2', '--jobs', '1', '--stall-limit', '5m', '--log', 'auto', '--quiet').code).toBe(0);
    expect(shellSplits(readJson(join(out, 'parts', 'started-2-of-2.json')).command)).toEqual(['quern', 'reduce', archive, '--out', out, '--jobs', '1', '--stall-limit', '5m', '--log', 'auto', '--quiet', '--shard', '2/2']);
  });

  it('merge\'s lock names the merge as given, quoted for a shell', async () => {
    const { archive } = oneRecording();
    const out = join(archive, '..', "lab's out");
    for (const k of [1, 2]) expect(quern('reduce', archive, '--out', out, '--shard', `${k}/2`, '--jobs', '1', '--quiet').code).toBe(0);
    // The merge is killed once its lock is there, so the lock stays behind to be read.
    const child = spawn(process.execPath, [join(repo, 'dist', 'pipeline', 'cli.js'), 'merge', out, '--storage-limit', '2m'], { stdio: 'ignore' });
    const ended = new Promise<void>((done) => child.on('exit', () => done()));
    const lock = join(out, 'run.lock');
    let holder: any = null;
    for (let i = 0; i < 4000 && !holder; i++) {
      try { holder = JSON.parse(readFileSync(lock, 'utf8')); } catch { await new Promise((r) => setTimeout(r, 2)); }
    }
    child.kill('SIGKILL');
    await ended;
    expect(holder?.pid).toBe(child.pid);
    expect(shellSplits(holder.command)).toEqual(['quern', 'merge', out, '--storage-limit', '2m']);
  });
});
