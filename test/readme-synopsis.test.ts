// README's Commands synopsis against each command's --help: a lab reading one must find the options the other lists.
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { quern, repo } from './helpers.js';

const COMMANDS = ['reduce', 'merge', 'export', 'check', 'peek'];

/** Each command's lines of the synopsis block under "## Commands" (a line starting with spaces continues the one above). */
function synopsis(): Map<string, string> {
  const readme = readFileSync(join(repo, 'README.md'), 'utf8');
  const block = readme.slice(readme.indexOf('## Commands')).split('```sh\n')[1].split('```')[0];
  const by = new Map<string, string>();
  let command = '';
  for (const line of block.split('\n')) {
    const m = /^quern (\w+)/.exec(line);
    if (m) command = m[1];
    if (command) by.set(command, `${by.get(command) ?? ''} ${line.replace(/#.*$/, '')}`);
  }
  return by;
}

const optionsIn = (text: string) => new Set([...text.matchAll(/(?<![\w-])--([a-z][a-z-]*)/g)].map((m) => m[1]));

describe("README's command synopsis", () => {
  it('names every option each command\'s --help lists, and none it does not', () => {
    const readme = synopsis();
    expect([...readme.keys()].sort()).toEqual([...COMMANDS].sort());
    for (const command of COMMANDS) {
      const help = quern(command, '--help');
      expect(help.code).toBe(0);
      // yargs lists each option at the start of a line of its Options section.
      const listed = new Set([...help.stdout.matchAll(/^ {2}--([a-z][a-z-]*)/gm)].map((m) => m[1]).filter((o) => o !== 'help' && o !== 'version'));
      expect(listed.size, command).toBeGreaterThan(0);
      const written = optionsIn(readme.get(command)!);
      expect([...listed].filter((o) => !written.has(o)), `${command}: in --help, not in README`).toEqual([]);
      expect([...written].filter((o) => !listed.has(o)), `${command}: in README, not in --help`).toEqual([]);
    }
  });
});
