// A pack shorter than the run that last wrote it left it (a truncated copy of the output folder, a restore cut short):
// the entries wholly past the cut leave no damaged bytes to find, so the pack's length and entry count, kept in its scan
// mark, tell that they were lost, and their recordings are recomputed as lost results, not taken for new recordings.
import { basename } from 'node:path';
import { shardOf } from '../select/select.js';

/**
 * A pack found shorter than its mark says, as run.json's `store.cut_short` lists it; `gone` when the file itself is missing
 * (deleted beside a mark that stayed), read as cut at byte 0.
 */
export interface PackCut { file: string; at_byte: number; bytes_lost: number; entries_lost: number; gone?: true }

/** A cut pack with what its mark says the run that wrote it saw, to tell whose entries lay past the cut. */
export interface CutPack { cut: PackCut; scanStartedMs: number; leftOut: ReadonlySet<string>; shard: { k: number; n: number } | null }

/** The pack's length and sound entries as a run leaves them, kept in its scan mark. */
export interface PackEnd { pack_bytes: number; pack_entries: number }

/**
 * The cut of pack `file`, now `size` bytes holding `entries` sound entries and `damaged` damaged stretches, against its scan
 * mark (parsed JSON); null when it is as long as the mark says, or the mark predates the pack's length being kept. A damaged
 * stretch (the entry the cut falls inside among them) is listed as damaged, so counts as one entry not lost past the cut.
 */
export function packCut(file: string, size: number, entries: number, mark: unknown, damaged = 0, gone = false): CutPack | null {
  const m = mark as Partial<PackEnd> & { scan_started?: unknown; left_out?: unknown } | null;
  if (!m || !Number.isSafeInteger(m.pack_bytes) || !Number.isSafeInteger(m.pack_entries) || size >= m.pack_bytes!) return null;
  const shard = /^entries-(\d+)-of-(\d+)\.pack$/.exec(basename(file));
  const started = Date.parse(String(m.scan_started));
  return {
    cut: { file, at_byte: size, bytes_lost: m.pack_bytes! - size, entries_lost: Math.max(0, m.pack_entries! - entries - damaged), ...(gone ? { gone: true as const } : {}) },
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

/** The terminal's words for a cut pack: where it ends, or that it is gone, and how many stored results past the cut were lost. */
export function cutShortLine(c: PackCut): string {
  const results = (n: number) => `${n} stored ${n === 1 ? 'result' : 'results'}`;
  if (c.gone) return `stored results in ${c.file}: the pack is gone (deleted?), where the run that wrote it left ${c.bytes_lost} bytes; ${results(c.entries_lost)} in it lost, their recordings recomputed`;
  const lost = c.entries_lost ? `${results(c.entries_lost)} past it lost, their recordings recomputed` : 'no stored result lost past it beyond those listed as damaged';
  return `stored results in ${c.file}: the pack ends at byte ${c.at_byte}, ${c.bytes_lost} bytes short of what the run that wrote it left (a truncated copy?); ${lost}`;
}

/** run.json's `why` for a recording whose entry lay in a cut pack, past the cut. */
export const lostWhy = (c: PackCut): string => `stored entry lost (${c.gone ? `${c.file} is gone` : `${c.file} was cut short at byte ${c.at_byte}`}); recomputed`;
