// The progress bar on a terminal holds its line open; a message told while it shows (a signal's line, an error) must
// start a line of its own. The run is given a terminal by script(1) (util-linux, Debian's bsdutils), which records what the
// terminal got: a system check, since a machine with only Node and npm need not have it.
import { spawn } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { repo, sampleArchiveCopy } from '../helpers.js';
import { requireTool } from './tools.js';

/** The command under a pseudo-terminal, stopped by SIGTERM once its bar shows; what the terminal received. */
async function stoppedUnderBar(archive: string, out: string): Promise<string> {
  const command = `${process.execPath} ${join(repo, 'dist', 'pipeline', 'cli.js')} reduce ${archive} --out ${out} --jobs 1`;
  const child = spawn(requireTool('script'), ['-qfec', command, '/dev/null'], { stdio: ['ignore', 'pipe', 'pipe'], env: { ...process.env, TERM: 'xterm', COLUMNS: '160' } });
  let text = '';
  child.stdout.on('data', (b: Buffer) => { text += b.toString('utf8'); });
  const ended = new Promise<void>((resolve) => child.on('exit', () => resolve()));
  const lock = join(out, 'run.lock');
  for (let i = 0; i < 4000 && !(text.includes('reducing [') && existsSync(lock)); i++) await new Promise((r) => setTimeout(r, 5));
  expect(text).toContain('reducing [');
  process.kill(JSON.parse(readFileSync(lock, 'utf8')).pid, 'SIGTERM');
  await ended;
  return text;
}

describe('a message told while the progress bar shows', () => {
  it('starts on a line of its own, with the bar cleared and the cursor shown again', async () => {
    const archive = sampleArchiveCopy();
    const text = await stoppedUnderBar(archive, join(archive, '..', 'out'));
    const at = text.indexOf('quern: stopped by SIGTERM');
    expect(at).toBeGreaterThan(0);
    // Before the message, since the bar's last drawing: a line end, or the cursor to column 1 and the line erased
    // (ECMA-48: CSI 1 G, cursor character absolute; CSI 2 K, erase in line, the whole line).
    const before = text.slice(0, at);
    expect(before).toMatch(/(?:\n|\x1b\[1G\x1b\[2K)$/);
    // The cursor the bar hid (DEC private mode 25) is shown again before the message.
    expect(before.lastIndexOf('\x1b[?25h')).toBeGreaterThan(before.lastIndexOf('\x1b[?25l'));
  });
});
