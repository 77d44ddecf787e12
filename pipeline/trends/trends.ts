// After a run's results are stored: each watched feature against its channel's baseline (trends.parquet, and what changed
// for quality.json, quality.html and the terminal).
import { createHash } from 'node:crypto';
import { mkdir, readFile, rm } from 'node:fs/promises';
import { dirname, join } from 'node:path';
import type { ReductionSpec } from '../../spec/reduction.js';
import { canonicalJson } from '../declare/canonical-json.js';
import { presentEntriesAsStored, type Present } from '../plan/cache.js';
import { writeFileAtomic } from '../outputs/atomic.js';
import { filesInPlace, keptFiles } from '../outputs/in-place.js';
import type { Store } from '../store/store.js';
import { StagedFile } from '../outputs/staged.js';
import { addTrendRows, changesReport, scoreHistory, type ChangesReport } from './changes.js';
import { readHistory, type Declarations, type History } from './history.js';
import { keepReported, markNews, readReported, reportedNow } from './news.js';
import type { TrendOptions } from './options.js';
import { gatherPictures } from './pictures.js';
import { TRENDS_TABLE } from './tables.js';

export interface TrendsOutcome { report: ChangesReport; html: string }

/**
 * What is kept of the trends while their history is unchanged: the report before its news are marked, the pictured channels'
 * part of the section (news.ts marks a run's new items in the table above it), and the channel features whose latest verdict is steady.
 */
interface KeptOutcome { report: ChangesReport; pictures: string; steady: string[] }

/** What the tables and the changes are made from: the spec, the tool, and each present recording's group and stored results checksum. */
function trendsDigest(spec: ReductionSpec, store: Store, present: Present, inRun: ReadonlySet<string>, metadata: Record<string, string>, since: number | null, earlierStored: boolean, declarations: Declarations): string {
  const declared = Object.fromEntries([...declarations].map(([g, keys]) => [g, [...keys].sort()]));
  const h = createHash('sha256').update(canonicalJson({ spec, version: metadata['quern.version'] ?? null, archive: metadata['quern.archive'] ?? null, since, earlierStored, declared }));
  for (const r of [...present.keys()].sort()) {
    const loc = store.get(r);
    if (loc) h.update(`\n${r}\u0000${present.get(r)}\u0000${loc.bodySha}\u0000${inRun.has(r) ? 1 : 0}`);
  }
  return h.digest('hex');
}

/** The trends' kept state: the digest, the tables' sizes by name relative to the output folder, and what changed. */
interface KeptTrends { digest: string; files: Record<string, number>; outcome: KeptOutcome | null }
const keptPath = (out: string) => join(out, 'cache', 'trends.json');

async function stillCurrent(out: string, digest: string): Promise<KeptTrends | null> {
  try {
    const kept = JSON.parse(await readFile(keptPath(out), 'utf8')) as KeptTrends;
    // Trends kept before the news were marked hold no pictures of their own: worked out again.
    if (kept.digest !== digest || (kept.outcome && typeof kept.outcome.pictures !== 'string')) return null;
    return (await filesInPlace(out, kept.files)) ? kept : null;
  } catch {
    return null;
  }
}

/** What the trends step reads: the digest of what its outputs are made from, and the kept trends that still hold it or else the history. */
export interface TrendsBasis { digest: string; kept: KeptTrends | null; history: History | null }

export interface TrendsInput {
  trends: TrendOptions | null; store: Store; recordings: string[]; metadata: Record<string, string>;
  /** The recordings in the archive now (every shard's, for merge) and their groups' present names: the history holds no other. */
  present: Present;
  /** The start of the run's period (--since), ms since the epoch; null for a run without one. */
  since?: number | null;
  /** Every recording of the archive outside the period has a stored result: no run could form an earlier baseline. */
  earlierStored?: boolean;
  /** Per group, the declaration its recordings are reduced under now: an entry stored under another holds its baseline place as stale. */
  declarations?: Declarations;
}

/**
 * The digest, and the history unless the trends kept for the same digest still hold (or trends are off). `renewable`: the
 * caller can recompute stale baseline places and the stale recordings holds rest on, so kept trends that name some are read again rather than taken.
 */
export async function trendsBasis(out: string, spec: ReductionSpec, o: TrendsInput, renewable = false): Promise<TrendsBasis> {
  const inRun = new Set(o.recordings);
  const digest = trendsDigest(spec, o.store, o.present, inRun, o.metadata, o.since ?? null, o.earlierStored ?? false, o.declarations ?? new Map());
  const kept = await stillCurrent(out, digest);
  if (kept && !(renewable && (kept.outcome?.report.stale_baselines || kept.outcome?.report.held_across_stale))) return { digest, kept, history: null };
  const history = o.trends ? await readHistory(out, spec, o.trends, inRun, presentEntriesAsStored(o.store, o.present), o.declarations ?? new Map()) : null;
  return { digest, kept: null, history };
}

/** What the trends step leaves to be put in place with the run's other outputs: staged tables, and what to do after. */
export interface TrendsWrite {
  outcome: TrendsOutcome | null;
  /**
   * What the outputs' digest reads of the changes: the report before its news are marked. What is new is told against the
   * previous run, so a re-run that changes nothing else leaves the outputs, and their marks, as the run that wrote them left them.
   */
  basis: unknown;
  /** Staged tables (closed), to be renamed into place together with the other outputs; empty when nothing changed. */
  files: StagedFile[];
  /** Just before the staged tables go in place: the kept digest forgotten, so that it never vouches for tables half replaced. */
  forget(): Promise<void>;
  /** After the outputs are in place: remove the tables whose section is off, and keep the digest. */
  done(): Promise<void>;
}

/**
 * With trends on, stages trends.parquet from the history the store keeps of the recordings present now, and works out
 * what changed; with trends off, the table is removed, so none is left stale. When nothing it is made from has changed since it was written, nothing is staged.
 */
export async function stageTrends(out: string, spec: ReductionSpec, o: TrendsInput & {
  /** The basis already read (by a run that recomputed stale baseline places first); read here otherwise. */
  basis?: TrendsBasis;
}): Promise<TrendsWrite> {
  const since = o.since ?? null, earlierStored = o.earlierStored ?? false;
  const { digest, kept, history } = o.basis ?? await trendsBasis(out, spec, o);
  // Kept or worked out, the report's new items are marked against the previous run's, kept once the outputs are in place.
  const [earlier, { changesSection }] = await Promise.all([readReported(out), import('../outputs/report-changes.js')]);
  const withNews = (k: KeptOutcome | null) => {
    if (!k) return { outcome: null, basis: null, keepNews: async () => {} };
    const report = markNews(k.report, earlier);
    return { outcome: { report, html: changesSection(report, k.pictures) }, basis: { report: k.report, pictures: k.pictures }, keepNews: () => keepReported(out, reportedNow(report, earlier, new Set(k.steady))) };
  };
  if (kept) {
    const { outcome, basis, keepNews } = withNews(kept.outcome);
    return { outcome, basis, files: [], forget: async () => {}, done: keepNews };
  }
  // The table and chart code (Arrow, Parquet, Vega) is loaded only when there is something to write.
  const [{ columnBatches, writeStreamedTable }, { picturesHtml }] = await Promise.all([import('./write.js'), import('../outputs/report-changes.js')]);
  const trendsFile = new StagedFile(join(out, 'trends.parquet'));
  const files: StagedFile[] = [];
  try {
    let pure: KeptOutcome | null = null;
    if (o.trends && history) {
      const scored = scoreHistory(history, o.trends);
      const steady = new Set<string>();
      const report = changesReport(history, scored, o.trends, since, earlierStored, steady);
      await writeStreamedTable(trendsFile, TRENDS_TABLE, columnBatches(TRENDS_TABLE, o.metadata, scored, (f, into) => addTrendRows(history, f, into)), o.metadata);
      files.push(trendsFile);
      const pictures = report.items.length ? await gatherPictures(history, scored, report, o.trends, spec, presentEntriesAsStored(o.store, o.present)) : [];
      pure = { report, pictures: await picturesHtml(report, pictures), steady: [...steady] };
    }
    const { outcome, basis, keepNews } = withNews(pure);
    return {
      outcome, basis, files,
      // Forgotten only as the tables go in place: a run that fails or stops before leaves the kept digest with the tables it vouches for.
      forget: () => rm(keptPath(out), { force: true }),
      done: async () => {
        if (!o.trends) await rm(trendsFile.path, { force: true });
        const sizes = keptFiles(out, files);
        // An archive with nothing to reduce has stored nothing, so the folder may not exist yet.
        await mkdir(dirname(keptPath(out)), { recursive: true });
        await writeFileAtomic(keptPath(out), JSON.stringify({ digest, files: sizes, outcome: pure } satisfies KeptTrends));
        await keepNews();
      },
    };
  } catch (e) {
    await trendsFile.discard();
    throw e;
  }
}
