// Walks the archive, following links to files and folders, and sorts its files into the declaration's groups; a file no
// group claims is reported.
import { lstat, readdir, realpath, stat } from 'node:fs/promises';
import { isAbsolute, join, relative, resolve, sep } from 'node:path';
import picomatch from 'picomatch';
import { eachAtOnce } from '../at-once.js';
import { formatOf } from '../../stages/read/format-of.js';
import { ARCHIVE_FILE, SPEC_FILE } from '../declare/declare.js';
import { UsageError } from '../declare/yaml-file.js';
import { isOutputFolder, isOwnOutput, OWN_OUTPUT_NAMES } from '../outputs/own-outputs.js';
import type { ArchiveDeclaration } from '../../spec/archive.js';

export interface ScannedRecording {
  /** Path relative to the archive root, with / separators. */
  recording: string;
  path: string;
  group: number;
  size: number;
  mtimeMs: number;
  /** When the file last appeared or changed as a file (its inode's change time; a copy keeping its modification time sets it); absent: unknown. */
  ctimeMs?: number;
  /** When size and modification time were read (ms since the epoch). */
  readAtMs: number;
}

/** Recordings found, recording-like files no group claims, and how many other files were passed over. */
export interface ScanResult { recordings: ScannedRecording[]; unmatched: string[]; otherFiles: number }

/**
 * The scanned files in packed columns: one string per file (its name in the archive) and its numbers in typed arrays.
 * A run holds 100,000 of them from scan to report; as objects each took about 0.25 KB, here about 0.07 KB.
 */
export class ScanTable {
  readonly recordings: string[];
  readonly group: Uint32Array;
  readonly size: Float64Array;
  readonly mtimeMs: Float64Array;
  readonly ctimeMs: Float64Array;
  readonly readAtMs: Float64Array;
  constructor(readonly root: string, found: readonly { recording: string; group: number }[]) {
    this.recordings = found.map((f) => f.recording);
    this.group = Uint32Array.from(found, (f) => f.group);
    this.size = new Float64Array(found.length);
    this.mtimeMs = new Float64Array(found.length);
    this.ctimeMs = new Float64Array(found.length);
    this.readAtMs = new Float64Array(found.length);
  }
  /** A file's full path, made when asked for. */
  pathOf(row: number): string { return join(this.root, this.recordings[row]); }
  /** Every file, each as a small view of its row. */
  files(): ScannedRecording[] { return Array.from(this.recordings, (_, row) => new ScannedFile(this, row)); }
}

/** One scanned file: reads its row of the table. */
export class ScannedFile implements ScannedRecording {
  constructor(private readonly table: ScanTable, readonly row: number) {}
  get recording(): string { return this.table.recordings[this.row]; }
  get path(): string { return this.table.pathOf(this.row); }
  get group(): number { return this.table.group[this.row]; }
  get size(): number { return this.table.size[this.row]; }
  get mtimeMs(): number { return this.table.mtimeMs[this.row]; }
  get ctimeMs(): number { return this.table.ctimeMs[this.row]; }
  get readAtMs(): number { return this.table.readAtMs[this.row]; }
}

export interface ScanOptions { exclude?: string[] }

/** Each group's patterns as one test of a path relative to the archive root, in the declaration's order. */
/** Whether a recording's name (relative, with / separators) matches a group's pattern, as the scan matches it. */
export const groupMatcher = (g: { match: string | string[] }) => picomatch(g.match, { dot: false });
const groupMatchers = (declaration: ArchiveDeclaration) => declaration.groups.map(groupMatcher);

/** Files stat'ed at once. */
const STATS_AT_ONCE = 32;

export async function scan(archive: string, declaration: ArchiveDeclaration, { exclude = [] }: ScanOptions = {}): Promise<ScanResult> {
  const root = resolve(archive);
  // Real paths of the folders walked or excluded: a link can lead neither into a folder twice nor into the output.
  const seen = new Set(await Promise.all(exclude.map((p) => realpath(p).catch(() => resolve(p)))));
  const matchers = groupMatchers(declaration);
  const found: { recording: string; group: number }[] = [];
  const unmatched: string[] = [];
  let otherFiles = 0;
  const linked: LinkedFolder[] = [];
  async function walk(dir: string, real: string): Promise<void> {
    seen.add(real);
    const entries = (await readdir(dir, { withFileTypes: true })).sort((a, b) => (a.name < b.name ? -1 : a.name > b.name ? 1 : 0));
    // An output folder of quern's in the archive (another --out, or this one under check): its own tables and exports are no recordings.
    const outputs = dir !== root && isOutputFolder(entries.map((e) => e.name));
    for (const e of entries) {
      const path = join(dir, e.name);
      // Hidden entries hold tools' state (version control, our own temporaries), never recordings.
      if (e.name.startsWith('.') || (outputs && OWN_OUTPUT_NAMES.has(e.name))) continue;
      const kind = e.isSymbolicLink() ? await linkKind(path) : e.isDirectory() ? 'folder' : e.isFile() ? 'file' : 'other';
      if (kind === 'linked folder') { linked.push({ path, within: real }); continue; }
      // A plain folder's real path is its parent's and its name: no system call.
      if (kind === 'folder') { await walkOnce(path, join(real, e.name)); continue; }
      // Files, and pipes, devices and sockets ('other'), go on: those a group matches are kept, so their reduction says why they cannot be read.
      const rel = relative(root, path).split(sep).join('/');
      if (rel === ARCHIVE_FILE || rel === SPEC_FILE) continue;
      const group = matchers.findIndex((m) => m(rel));
      if (group < 0) {
        // Only files that look like recordings are reported; notes and documents beside them are not.
        if (formatOf(rel) && !rel.toLowerCase().endsWith('.txt')) unmatched.push(rel); else otherFiles++;
        continue;
      }
      found.push({ recording: rel, group });
    }
  }
  /** Walks a folder unless it was walked (or excluded) before. */
  const walkOnce = async (dir: string, real: string) => { if (!seen.has(real)) await walk(dir, real); };
  await walk(root, await realpath(root));
  // Linked folders after every plain one, so a folder reached both ways (a "latest" link) keeps its own name.
  for (let i = 0; i < linked.length; i++) {
    const target = await realpath(linked[i].path).catch(() => null);
    if (target && !isWithin(linked[i].within, target)) await walkOnce(linked[i].path, target);
  }
  // Sizes and modification times, several at once: a stat waits on the file system, not on this thread.
  const table = new ScanTable(root, found);
  await eachAtOnce(table.recordings, STATS_AT_ONCE, async (_, i) => {
    const s = await statOrLink(table.pathOf(i));
    table.size[i] = s?.size ?? 0;
    table.mtimeMs[i] = s?.mtimeMs ?? 0;
    table.ctimeMs[i] = s?.ctimeMs ?? 0;
    table.readAtMs[i] = Date.now();
  });
  return { recordings: table.files(), unmatched, otherFiles };
}

/** The scan leaves the output folder out; one inside the archive that holds recordings a group matches (beside quern's own files) would hide them, so the run stops. */
export async function refuseHidingRecordings(archive: string, out: string, declaration: ArchiveDeclaration): Promise<void> {
  const root = await realpath(archive), dir = await realpath(out).catch(() => null);
  if (!dir || dir === root || !isWithin(dir, root)) return;
  const matchers = groupMatchers(declaration);
  // quern's own files there (tables, exports, stored results) are no recordings, whatever a group matches.
  const names = (await readdir(dir, { recursive: true }).catch(() => [] as string[])).map((n) => n.split(sep).join('/')).filter((n) => !isOwnOutput(n)).sort();
  const hidden = names.map((n) => relative(root, join(dir, n)).split(sep).join('/')).find((r) => matchers.some((m) => m(r)));
  if (hidden) throw new UsageError(`the output folder ${out} holds recordings of the archive (${hidden}), which a run never reads from its own output folder; give an output folder (--out) outside the recordings`);
}

/** A link to a folder, and the real path of the folder holding it. */
interface LinkedFolder { path: string; within: string }

/** What a link leads to; one whose target cannot be reached (missing, a loop, forbidden) counts as a file, to be reported, not lost. */
async function linkKind(path: string): Promise<'file' | 'linked folder' | 'other'> {
  const target = await stat(path).catch(() => null);
  return !target || target.isFile() ? 'file' : target.isDirectory() ? 'linked folder' : 'other';
}

/** Whether folder `inner` is `outer` or lies inside it: a link to an ancestor of its own folder would hold itself. */
function isWithin(inner: string, outer: string): boolean {
  const r = relative(outer, inner);
  return r === '' || (r !== '..' && !r.startsWith(`..${sep}`) && !isAbsolute(r));
}

/**
 * A file's size and times (a link's target's); a link whose target cannot be reached gives its own, and a file gone since
 * it was listed (moved away, or a name not in UTF-8 that leads nowhere) none: their reduction says why they fail, not the scan.
 */
const statOrLink = (path: string) => stat(path).catch(() => lstat(path)).catch(() => null);
