// An output folder that cannot be made ends the run at once with exit code 2 and a message naming where and why,
// never with a stack trace or a run that spins.
import { spawnSync } from 'node:child_process';
import { existsSync, readdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { repo, sampleArchiveCopy, tempDir } from './helpers.js';

/** The built command line, stopped after a minute should it ever spin. */
const quernWithin = (...args: string[]) => {
  const r = spawnSync(process.execPath, [join(repo, 'dist', 'pipeline', 'cli.js'), ...args], { encoding: 'utf8', timeout: 60_000, env: { ...process.env, FORCE_COLOR: '0' } });
  return { code: r.status, signal: r.signal, stderr: r.stderr };
};

describe('an output folder that cannot be made', () => {
  it('under a file: exit code 2, the file named, no stack trace, nothing written', () => {
    const dir = tempDir(), file = join(dir, 'notes.txt');
    writeFileSync(file, 'not a folder\n');
    const r = quernWithin('reduce', sampleArchiveCopy(), '--out', join(file, 'out'), '--quiet');
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(`cannot make the output folder ${join(file, 'out')}: ${file} is a file, not a folder`);
    expect(r.stderr).not.toMatch(/^\s+at /m);
    expect(readdirSync(dir)).toEqual(['notes.txt']);
  });

  // Linux's /proc answers "no such file" to a new folder, where Node's recursive mkdir retries forever (common practice: procfs takes no user files).
  it.runIf(existsSync('/proc/self'))('where the file system refuses it (/proc): exit code 2 with the reason, not a run that spins', () => {
    const r = quernWithin('reduce', sampleArchiveCopy(), '--out', '/proc/quern-out', '--quiet');
    expect(r.signal).toBeNull();
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('cannot make the output folder /proc/quern-out: the file system refuses it (ENOENT) at /proc/quern-out');
  });
});
