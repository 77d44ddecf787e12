// Walks the archive and sorts its files into the declaration's groups; a file no group claims is reported.
import { readdir, stat } from 'node:fs/promises';
import { join, relative, resolve, sep } from 'node:path';
import picomatch from 'picomatch';
import { eachAtOnce } from '../at-once.js';
import { formatOf } from '../../stages/read/open.js';
import { ARCHIVE_FILE, SPEC_FILE } from '../declare/declare.js';
import type { ArchiveDeclaration } from '../../spec/archive.js';

export interface ScannedRecording {
  /** Path relative to the archive root, with / separators. */
  recording: string;
  path: string;
  group: number;
  size: number;
  mtimeMs: number;
  /** When size and modification time were read (ms since the epoch). */
  readAtMs: number;
}

/** Recordings found, recording-like files no group claims, and how many other files were passed over. */
export interface ScanResult { recordings: ScannedRecording[]; unmatched: string[]; otherFiles: number }

export interface ScanOptions { exclude?: string[] }

/** Files stat'ed at once. */
const STATS_AT_ONCE = 32;

export async function scan(archive: string, declaration: ArchiveDeclaration, { exclude = [] }: ScanOptions = {}): Promise<ScanResult> {
  const root = resolve(archive);
  const skip = new Set(exclude.map((p) => resolve(p)));
  const matchers = declaration.groups.map((g) => picomatch(g.match, { dot: false }));
  const found: { recording: string; path: string; group: number }[] = [];
  const unmatched: string[] = [];
  let otherFiles = 0;
  async function walk(dir: string): Promise<void> {
    const entries = (await readdir(dir, { withFileTypes: true })).sort((a, b) => (a.name < b.name ? -1 : a.name > b.name ? 1 : 0));
    for (const e of entries) {
      const path = join(dir, e.name);
      // Hidden entries hold tools' state (version control, our own temporaries), never recordings.
      if (e.name.startsWith('.') || skip.has(path)) continue;
      if (e.isDirectory()) { await walk(path); continue; }
      if (!e.isFile()) continue;
      const rel = relative(root, path).split(sep).join('/');
      if (rel === ARCHIVE_FILE || rel === SPEC_FILE) continue;
      const group = matchers.findIndex((m) => m(rel));
      if (group < 0) {
        // Only files that look like recordings are reported; notes and documents beside them are not.
        if (formatOf(rel) && !rel.toLowerCase().endsWith('.txt')) unmatched.push(rel); else otherFiles++;
        continue;
      }
      found.push({ recording: rel, path, group });
    }
  }
  await walk(root);
  // Sizes and modification times, several at once: a stat waits on the file system, not on this thread.
  const recordings: ScannedRecording[] = new Array(found.length);
  await eachAtOnce(found, STATS_AT_ONCE, async ({ recording, path, group }, i) => {
    const s = await stat(path);
    recordings[i] = { recording, path, group, size: s.size, mtimeMs: s.mtimeMs, readAtMs: Date.now() };
  });
  return { recordings, unmatched, otherFiles };
}
