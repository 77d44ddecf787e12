// An output folder that cannot be made ends the run at once with exit code 2 and a message naming where and why,
// never with a stack trace or a run that spins.
import { existsSync, readdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { quernWithin, sampleArchiveCopy, tempDir } from './helpers.js';

/** The built command line, stopped after a minute should it ever spin. */
const quernWithinAMinute = (...args: string[]) => quernWithin(60_000, ...args);

describe('an output folder that cannot be made', () => {
  it('under a file: exit code 2, the file named, no stack trace, nothing written', () => {
    const dir = tempDir(), file = join(dir, 'notes.txt');
    writeFileSync(file, 'not a folder\n');
    const r = quernWithinAMinute('reduce', sampleArchiveCopy(), '--out', join(file, 'out'), '--quiet');
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(`cannot make the output folder ${join(file, 'out')}: ${file} is a file, not a folder`);
    expect(r.stderr).not.toMatch(/^\s+at /m);
    expect(readdirSync(dir)).toEqual(['notes.txt']);
  });

  // Linux's /proc answers "no such file" to a new folder, where Node's recursive mkdir retries forever (common practice: procfs takes no user files).
  it.runIf(existsSync('/proc/self'))('where the file system refuses it (/proc): exit code 2 with the reason, not a run that spins', () => {
    const r = quernWithinAMinute('reduce', sampleArchiveCopy(), '--out', '/proc/quern-out', '--quiet');
    expect(r.signal).toBeNull();
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('cannot make the output folder /proc/quern-out: the file system refuses it (ENOENT) at /proc/quern-out');
  });
});
