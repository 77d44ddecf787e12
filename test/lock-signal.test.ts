// A signal the very moment a run's lock file is created (before the lock is filled and taken): the run must still remove
// it. The moment is hit every time by a module loaded into the run's own process (Node's --import), which sends the
// process SIGTERM as soon as the lock file is created, as a scheduler's time limit could; the run itself is unchanged.
// Reference: the README's promise (a run stopped by SIGTERM releases its lock and exits 143, 128 plus the signal's number,
// as POSIX shells report it; common practice).
import { existsSync, mkdirSync, readdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { encodeWav } from '../scripts/wav-file.js';
import { oneRigArchive, quern, quernUnder, tempDir } from './helpers.js';

/** Node's --import of a module that sends its process SIGTERM once, right after a lock file (*.lock) is created. */
const TERM_AT_LOCK = `--import=data:text/javascript,${encodeURIComponent([
  'import fsp from "node:fs/promises";',
  'import { syncBuiltinESMExports } from "node:module";',
  'const real = fsp.open; let sent = false;',
  'fsp.open = async (path, flags, ...rest) => { const h = await real(path, flags, ...rest);',
  '  if (!sent && flags === "wx" && String(path).endsWith(".lock")) { sent = true; process.kill(process.pid, "SIGTERM"); } return h; };',
  'syncBuiltinESMExports();',
].join('\n'))}`;

function archiveOf() {
  const root = tempDir(), archive = join(root, 'arch'), out = join(root, 'out');
  mkdirSync(join(archive, 'rig'), { recursive: true });
  writeFileSync(join(archive, 'archive.yaml'), oneRigArchive(2000));
  writeFileSync(join(archive, 'rig', 'a.wav'), encodeWav({ sampleRate: 2000, channels: [new Float64Array(2000)], encoding: 'pcm16' }));
  return { archive, out };
}

/** Every *.lock under the output folder. */
const locks = (out: string) => [...readdirSync(out), ...(existsSync(join(out, 'parts')) ? readdirSync(join(out, 'parts')).map((f) => `parts/${f}`) : [])].filter((f) => f.endsWith('.lock'));

describe('SIGTERM as the lock file is created', () => {
  it('a whole run and a shard remove their lock and exit 143, and the next run needs no takeover', () => {
    const { archive, out } = archiveOf();
    for (const shard of [[], ['--shard', '1/2']]) {
      const r = quernUnder([TERM_AT_LOCK], 'reduce', archive, '--out', out, '--jobs', '1', '--quiet', ...shard);
      expect(r.signal, r.stderr).toBeNull();
      expect(r.code, r.stderr).toBe(143);
      expect(r.stderr).toContain('quern: stopped by SIGTERM; the outputs are as they were before the run');
      expect(locks(out)).toEqual([]);
    }
    const next = quern('reduce', archive, '--out', out, '--jobs', '1', '--quiet');
    expect(next.code).toBe(0);
    expect(next.stdout).not.toContain('took over');
  });

  it('a merge removes its lock and exits 143', () => {
    const { archive, out } = archiveOf();
    for (const k of [1, 2]) expect(quern('reduce', archive, '--out', out, '--shard', `${k}/2`, '--jobs', '1', '--quiet').code).toBe(0);
    const r = quernUnder([TERM_AT_LOCK], 'merge', out, '--jobs', '1');
    expect(r.signal, r.stderr).toBeNull();
    expect(r.code, r.stderr).toBe(143);
    expect(locks(out)).toEqual([]);
    expect(quern('merge', out, '--jobs', '1').code).toBe(0);
  });
});
