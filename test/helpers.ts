// Shared test helpers: temporary folders, the built command line, reading whole recordings.
import { spawnSync } from 'node:child_process';
import { cpSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { openRecording, type OpenOptions } from '../stages/read/open.js';

export const repo = join(dirname(fileURLToPath(import.meta.url)), '..');
export const fixture = (...p: string[]) => join(repo, 'test', 'fixtures', ...p);
/** Temporary folders this test file made: removed once its tests are done (test/remove-temp-dirs.ts), unless QUERN_KEEP_TEST_DIRS is set. */
const made: string[] = [];
export function tempDir(prefix = 'quern-test-'): string {
  const dir = mkdtempSync(join(tmpdir(), prefix));
  made.push(dir);
  return dir;
}
export function removeTempDirs(): void {
  if (process.env.QUERN_KEEP_TEST_DIRS) return;
  for (const dir of made.splice(0)) rmSync(dir, { recursive: true, force: true });
}
export const readJson = <T = any>(path: string): T => JSON.parse(readFileSync(path, 'utf8'));

/** A private copy of the sample archive, so tests can add and break files. */
export function sampleArchiveCopy(): string {
  const dir = join(tempDir(), 'archive');
  cpSync(join(repo, 'sample-archive'), dir, { recursive: true });
  return dir;
}

/** The built command line (npm test builds it first) in a process of its own; `limitMs` stops it should it wait or spin. */
function spawnQuern(nodeOptions: string[], args: string[], limitMs?: number, env: Record<string, string> = {}) {
  const r = spawnSync(process.execPath, [...nodeOptions, join(repo, 'dist', 'pipeline', 'cli.js'), ...args], { encoding: 'utf8', timeout: limitMs, env: { ...process.env, FORCE_COLOR: '0', ...env } });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr, signal: r.signal };
}

/** archive.yaml of one rig group, "rig/*.wav", at `fs` Hz: one accelerometer channel, acc (±100 m/s², 16 bits). */
export const oneRigArchive = (fs: number) => `groups:
  - name: rig
    match: "rig/*.wav"
    sample_rate: ${fs}
    channels:
      - { name: acc, quantity: acceleration, unit: m/s^2, scale: 100, range: [-100, 100], bits: 16, max_frequency_hz: 400 }
`;

/** Runs the built command line as a user would. */
export const quern = (...args: string[]) => spawnQuern([], args);

/** The same, with Node's own options before the command (a V8 trace, say). */
export const quernUnder = (nodeOptions: string[], ...args: string[]) => spawnQuern(nodeOptions, args);

/** The same, with variables added to its environment (TMPDIR, say). */
export const quernWith = (env: Record<string, string>, ...args: string[]) => spawnQuern([], args, undefined, env);

/** The same, stopped after `limitMs` (its signal then says so): a command that waits or spins fails its test, not the suite. */
export const quernWithin = (limitMs: number, ...args: string[]) => spawnQuern([], args, limitMs);

/** Every sample of a recording, per channel, gathered from the streaming reader (small files only). */
export async function readAll(path: string, options: OpenOptions = {}) {
  const rec = await openRecording(path, { chunkFrames: 97, ...options }); // an odd chunk size exercises chunk edges
  const channels: number[][] = Array.from({ length: rec.channelCount }, () => []);
  // Closed whether its samples read or failed, as the reduce step closes a recording (an open file left to the collector otherwise).
  try {
    for await (const chunk of rec.chunks()) chunk.forEach((c, i) => channels[i].push(...c));
  } finally { await rec.close(); }
  return { rec, channels };
}
