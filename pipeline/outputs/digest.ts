// Whether the outputs in place already say what this run would write: a digest of everything the tables and reports are
// made from (each entry's results checksum, the spec, labels, version, unmatched files), kept beside the outputs.
import type { BrokenGroup } from './broken-groups.js';
import type { QuietGroup } from '../select/select.js';
import { createHash } from 'node:crypto';
import { readFile, rm } from 'node:fs/promises';
import { canonicalJson } from '../declare/canonical-json.js';
import { writeFileAtomic } from './atomic.js';
import { filesInPlace } from './in-place.js';
import type { QualitySummary } from './quality.js';

export interface DigestInput {
  version: string;
  spec: unknown;
  labels: string[];
  tables: Record<string, unknown>;
  /** The tables' metadata, less the run id (which names the run that wrote them). */
  metadata: Record<string, string>;
  unmatched: string[];
  /** The groups quiet over a --since period (the report names them). */
  quiet?: QuietGroup[];
  /** The broken groups of archive.yaml (the report names them). */
  broken?: BrokenGroup[];
  /** Made one at a time (a generator), so that no second list the size of the run is held. */
  items: Iterable<{ recording: string; group: string; bodySha: string; labels: Record<string, string> }>;
}

/** SHA-256 over the inputs in table order: the basis of the outputs, all they are made from but the changes. */
export function outputsDigest(d: DigestInput): string {
  const h = createHash('sha256');
  const { 'quern.run_id': _runId, ...metadata } = d.metadata;
  // Quiet and broken groups enter only when there are some, so that other runs' digests stay as they were.
  h.update(canonicalJson({ version: d.version, spec: d.spec, labels: d.labels, tables: d.tables, metadata, unmatched: d.unmatched, ...(d.quiet?.length ? { quiet: d.quiet } : {}), ...(d.broken?.length ? { broken: d.broken } : {}) }));
  for (const it of d.items) h.update(`\n${it.recording}\u0000${it.group}\u0000${it.bodySha}\u0000${canonicalJson(it.labels)}`);
  return h.digest('hex');
}

/**
 * The digest of the outputs: their basis and what changed against the baselines (which rests on the whole stored history;
 * null when trends are off). Equal digests mean equal tables and reports, row for row.
 */
export const withChanges = (basis: string, changes: { basis: unknown } | null): string =>
  createHash('sha256').update(`${basis}\n${canonicalJson(changes?.basis ?? null)}`).digest('hex');

/** What the digest file keeps: the digest and its basis, the run that wrote the outputs, their sizes (by name relative to the output folder), and the terminal's quality summary. */
export interface DigestRecord { digest: string; basis?: string; run_id: string; written: string; files: Record<string, number>; quality: QualitySummary }

export async function readDigest(path: string): Promise<DigestRecord | null> {
  try { return JSON.parse(await readFile(path, 'utf8')); } catch { return null; }
}

/** True when the digest matches and every output is in place in `out`, the folder the run writes, at the size it was written with. */
export async function stillCurrent(out: string, path: string, digest: string): Promise<DigestRecord | null> {
  const d = await readDigest(path);
  if (!d || d.digest !== digest) return null;
  return (await filesInPlace(out, d.files)) ? d : null;
}

/** Forgets the digest before outputs are replaced: a run stopped half-way must not leave a digest that vouches for them. */
export const forgetDigest = (path: string) => rm(path, { force: true });

export const keepDigest = (path: string, d: DigestRecord) => writeFileAtomic(path, JSON.stringify(d, null, 2) + '\n');
