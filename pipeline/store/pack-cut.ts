// A pack shorter than the run that last wrote it left it (a truncated copy of the output folder, a restore cut short):
// the entries wholly past the cut leave no damaged bytes to find, so the pack's length and entry count, kept in its scan
// mark, tell that they were lost, and their recordings are recomputed as lost results, not taken for new recordings.
import { basename } from 'node:path';
import { shardOf } from '../select/select.js';

/** A pack found shorter than its mark says, as run.json's `store.cut_short` lists it. */
export interface PackCut { file: string; at_byte: number; bytes_lost: number; entries_lost: number }

/** A cut pack with what its mark says the run that wrote it saw, to tell whose entries lay past the cut. */
export interface CutPack { cut: PackCut; scanStartedMs: number; leftOut: ReadonlySet<string>; shard: { k: number; n: number } | null }

/** The pack's length and sound entries as a run leaves them, kept in its scan mark. */
export interface PackEnd { pack_bytes: number; pack_entries: number }

/**
 * The cut of pack `file`, now `size` bytes holding `entries` sound entries, against its scan mark (parsed JSON); null when
 * it is as long as the mark says, or the mark predates the pack's length being kept.
 */
export function packCut(file: string, size: number, entries: number, mark: unknown): CutPack | null {
  const m = mark as Partial<PackEnd> & { scan_started?: unknown; left_out?: unknown } | null;
  if (!m || !Number.isSafeInteger(m.pack_bytes) || !Number.isSafeInteger(m.pack_entries) || size >= m.pack_bytes!) return null;
  const shard = /^entries-(\d+)-of-(\d+)\.pack$/.exec(basename(file));
  const started = Date.parse(String(m.scan_started));
  return {
    cut: { file, at_byte: size, bytes_lost: m.pack_bytes! - size, entries_lost: Math.max(0, m.pack_entries! - entries) },
    scanStartedMs: Number.isFinite(started) ? started : -Infinity,
    leftOut: new Set(Array.isArray(m.left_out) ? m.left_out.filter((r): r is string => typeof r === 'string') : []),
    shard: shard ? { k: Number(shard[1]), n: Number(shard[2]) } : null,
  };
}

/**
 * Whether `recording`, now without an entry, had one in the cut pack: in the pack's share, unchanged as a file (its inode
 * change time, `ctimeMs`) since the run that wrote the mark scanned, and not among those it left without a result.
 */
export function lostPast(c: CutPack, recording: string, ctimeMs: number): boolean {
  if (c.shard && shardOf(recording, c.shard.n) !== c.shard.k) return false;
  return ctimeMs < c.scanStartedMs && !c.leftOut.has(recording);
}
