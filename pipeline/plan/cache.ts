// Results kept per recording and feature group, so a re-run computes only what changed. One JSON entry per recording,
// written atomically as soon as the recording is done: a run killed at any moment keeps every finished recording.
import { createHash } from 'node:crypto';
import { createReadStream } from 'node:fs';
import { mkdir, readdir, readFile } from 'node:fs/promises';
import { dirname, join } from 'node:path';
import { canonicalJson } from '../declare/declare.js';
import { activeStages } from '../../stages/index.js';
import { writeFileAtomic } from '../outputs/atomic.js';
import type { ReductionSpec } from '../../spec/reduction.js';
import type { RecordingJob } from './plan.js';
import type { RecordingOutput } from '../reduce/result.js';

/** What identifies a recording's content: size and modification time, and a content hash when those cannot be trusted. */
export interface Identity { size: number; mtimeMs: number; hash: string | null }

export interface CacheEntry extends RecordingOutput {
  version: string;
  identity: Identity;
  /** When the file was read (ms since the epoch): a file modified within 2 s of it gets a content hash. */
  readAtMs: number;
  declKey: string;
  /** The key each stored group was computed under. */
  groupKeys: Record<string, string>;
  /** For a failed recording: the spec hash it failed under. */
  failureKey?: string;
}

const sha = (s: string) => createHash('sha256').update(s).digest('hex');

export const cacheDir = (out: string) => join(out, 'cache');
export const entryPath = (out: string, recording: string) => { const h = sha(recording); return join(cacheDir(out), h.slice(0, 2), `${h.slice(2, 40)}.json`); };

export async function readEntry(out: string, recording: string): Promise<CacheEntry | null> {
  try {
    const e = JSON.parse(await readFile(entryPath(out, recording), 'utf8')) as CacheEntry;
    return e.recording === recording ? e : null;
  } catch {
    return null; // absent or unreadable: compute afresh
  }
}

/** Every entry the output folder holds, whatever this run selected (the history that trends read); unreadable ones are passed over. */
export async function* storedEntries(out: string): AsyncGenerator<CacheEntry> {
  const dirs = (await readdir(cacheDir(out), { withFileTypes: true }).catch(() => [])).filter((d) => d.isDirectory() && /^[0-9a-f]{2}$/.test(d.name));
  for (const d of dirs.sort((a, b) => (a.name < b.name ? -1 : 1))) {
    for (const f of (await readdir(join(cacheDir(out), d.name))).filter((n) => n.endsWith('.json')).sort()) {
      try {
        yield JSON.parse(await readFile(join(cacheDir(out), d.name, f), 'utf8')) as CacheEntry;
      } catch {
        // a damaged or half-written entry is no history
      }
    }
  }
}

/** Folders known to exist, so that storing thousands of small entries does not ask the file system each time. */
const made = new Set<string>();

export async function writeEntry(out: string, entry: CacheEntry): Promise<void> {
  const path = entryPath(out, entry.recording);
  if (!made.has(dirname(path))) { await mkdir(dirname(path), { recursive: true }); made.add(dirname(path)); }
  await writeFileAtomic(path, JSON.stringify(entry), { durable: false });
}

/** SHA-256 of a file's bytes, streamed. */
export function hashFile(path: string): Promise<string> {
  return new Promise((resolve, reject) => {
    const h = createHash('sha256');
    createReadStream(path).on('data', (d) => h.update(d)).on('error', reject).on('end', () => resolve(h.digest('hex')));
  });
}

/** The declaration facts a recording's numbers depend on (labels are not among them: they are applied when rows are assembled). */
export const declarationKey = (job: RecordingJob) =>
  sha(canonicalJson({
    format: job.format, sampleRate: job.sampleRate, layout: job.layout, channels: job.channels, durationS: job.durationS,
    // Only declared reader options enter the key, so the keys of groups without them stay as they were.
    ...(job.reader?.hdf5 || job.reader?.flac ? { reader: job.reader } : {}),
  }));

/** Per feature group, a key of the tool version and the resolved options of the group's stages. */
export function groupKeys(spec: ReductionSpec, version: string): Record<string, string> {
  const byGroup = new Map<string, unknown[]>();
  for (const s of activeStages(spec)) {
    const list = byGroup.get(s.definition.group) ?? byGroup.set(s.definition.group, []).get(s.definition.group)!;
    list.push({ options: s.options, only: s.only ?? null });
  }
  return Object.fromEntries([...byGroup].map(([g, opts]) => [g, sha(canonicalJson({ version, group: g, opts }))]));
}
