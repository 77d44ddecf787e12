// Recordings that came into the archive while the shards ran: found by a shard that scanned after they came, but not by
// the shard whose share they are, so no shard reduced them and the merged tables lack them until the next run.
import { resolve } from 'node:path';
import type { ReductionSpec } from '../../spec/reduction.js';
import type { RunRecord } from '../outputs/report.js';

/** How many recordings the shards' scans found beyond their owning shards', and which (as the archive holds them now). */
export interface Arrivals { count: number; recordings: string[] | null; unlisted_why?: string }
/** The recordings each part found in its own share: its lines, those outside its period, and those left to settle. */
function ownShare(p: RunRecord): Set<string> {
  return new Set([...p.recordings.map((r) => r.recording), ...(p.unselected ?? []).map((r) => r.recording), ...(p.settling ?? []).map((r) => r.recording)]);
}

/**
 * The recordings in the archive as the merged run counts them: the latest scan's count (each shard scans the whole archive),
 * and never fewer than the parts' shares hold together, since a share found after an earlier shard's scan is in it too.
 */
export function scannedOverall(parts: RunRecord[]): number {
  const owned = new Set(parts.flatMap((p) => [...ownShare(p)]));
  return Math.max(owned.size, ...parts.map((p) => p.counts.scanned));
}

/** Names the terminal shows; run.json holds them all. */
export const ARRIVALS_SHOWN = 10;

/**
 * Every shard scans the whole archive, so each part's count of recordings scanned beside the recordings its owners found
 * (lines, outside the period, settling) tells how many came in between the scans. Their names are in no part: they are
 * read from the archive now (its declaration and scan, as a shard reads them), or left unnamed where it cannot be read.
 * Null when the parts agree, or a part keeps no list of its share outside the period (written before those were kept).
 */
export async function arrivalsDuringShards(parts: RunRecord[], spec: ReductionSpec, outDir: string): Promise<Arrivals | null> {
  if (parts.some((p) => !p.unselected)) return null;
  const owned = new Set(parts.flatMap((p) => [...ownShare(p)]));
  const found = Math.max(...parts.map((p) => p.counts.scanned));
  if (found <= owned.size) return null;
  const count = found - owned.size;
  try {
    const [{ readArchiveDeclaration }, { reservedColumnNames }, { quantityUses }, { scan }] = await Promise.all([
      import('../declare/declare.js'), import('../outputs/output-tables.js'), import('../declare/quantity-uses.js'), import('../select/scan.js'),
    ]);
    const root = resolve(parts[0].archive);
    // Read as a run reads it: a broken group still claims its files, so they are found as a shard found them.
    const declaration = await readArchiveDeclaration(root, reservedColumnNames(spec), quantityUses(spec));
    const scanned = await scan(root, declaration, { exclude: [outDir] });
    return { count, recordings: scanned.recordings.map((r) => r.recording).filter((r) => !owned.has(r)) };
  } catch (e) {
    return { count, recordings: null, unlisted_why: `the archive could not be read from here (${(e as Error).message})` };
  }
}

/** The terminal's line: how many, the first names, and when they join the tables. */
export function arrivalsLine(a: Arrivals): string {
  const names = a.recordings?.length ? `: ${a.recordings.slice(0, ARRIVALS_SHOWN).join(', ')}${a.recordings.length > ARRIVALS_SHOWN ? `, … (${a.recordings.length} in the archive now; see run.json)` : ''}` : a.unlisted_why ? ` (not named: ${a.unlisted_why})` : '';
  return `  ARRIVED ${a.count} ${a.count === 1 ? 'recording' : 'recordings'} came into the archive while the shards ran, after the scan of the shard whose share ${a.count === 1 ? 'it is' : 'they are'}${names}; absent from these tables and trends until the next run`;
}
