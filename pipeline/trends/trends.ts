// After a run's results are stored: every recording's spectrum (spectra.parquet), and each watched feature against its channel's
// baseline (trends.parquet, and what changed for quality.json, quality.html and the terminal).
import { createHash } from 'node:crypto';
import { readFile, rm, stat } from 'node:fs/promises';
import { join } from 'node:path';
import { unpackSpectrum } from '../../stages/spectra.js';
import type { ReductionSpec } from '../../spec/reduction.js';
import { canonicalJson } from '../declare/declare.js';
import { entriesOf, everyEntry, type CacheEntry } from '../plan/cache.js';
import { writeFileAtomic } from '../outputs/atomic.js';
import type { Store } from '../store/store.js';
import { changesHtml } from '../outputs/report-changes.js';
import type { FeatureRow } from '../reduce/result.js';
import { changesReport, scoreHistory, trendRows, type ChangesReport } from './changes.js';
import { readHistory } from './history.js';
import type { TrendOptions } from './options.js';
import { gatherPictures } from './pictures.js';
import { SPECTRA_TABLE, TRENDS_TABLE } from './tables.js';
import { batched, writeStreamedTable } from './write.js';

export interface TrendsOutcome { report: ChangesReport; html: string }

/** spectra.parquet rows: every bin of every channel's kept spectrum, recording by recording. */
async function* spectrumRows(entries: Iterable<CacheEntry> | AsyncIterable<CacheEntry>): AsyncGenerator<FeatureRow> {
  for await (const e of entries) {
    const kept = e.status === 'reduced' ? e.groups.spectrum?.kept?.spectrum : undefined;
    if (!kept || !e.base) continue;
    for (const [c, ch] of e.base.channels.entries()) {
      const s = unpackSpectrum(kept[c]);
      if (!s) continue;
      for (let k = 0; k < s.density.length; k++) yield { recording: e.recording, channel: ch.name, unit: ch.unit, frequency_hz: k * s.df, density: s.density[k] };
    }
  }
}

/** What the tables and the changes are made from: the spec, the tool, and every stored entry's results checksum. */
function trendsDigest(spec: ReductionSpec, store: Store, inRun: ReadonlySet<string>, metadata: Record<string, string>): string {
  const h = createHash('sha256').update(canonicalJson({ spec, version: metadata['quern.version'] ?? null, archive: metadata['quern.archive'] ?? null }));
  for (const r of [...store.entries.keys()].sort()) h.update(`\n${r}\u0000${store.get(r)!.bodySha}\u0000${inRun.has(r) ? 1 : 0}`);
  return h.digest('hex');
}

interface KeptTrends { digest: string; files: Record<string, number>; outcome: TrendsOutcome | null }
const keptPath = (out: string) => join(out, 'cache', 'trends.json');

async function stillCurrent(out: string, digest: string): Promise<KeptTrends | null> {
  try {
    const kept = JSON.parse(await readFile(keptPath(out), 'utf8')) as KeptTrends;
    if (kept.digest !== digest) return null;
    for (const [file, size] of Object.entries(kept.files)) if ((await stat(file).catch(() => null))?.size !== size) return null;
    return kept;
  } catch {
    return null;
  }
}

/**
 * Writes spectra.parquet (when the spec has a spectrum section) from the entries of the run's recordings, in the order given,
 * and with trends on, trends.parquet from the history the store keeps. A table whose section is off is removed, so none is
 * left stale. When nothing they are made from has changed since they were written, they are left as they are.
 */
export async function writeTrendsAndSpectra(out: string, spec: ReductionSpec, o: {
  trends: TrendOptions | null; store: Store; recordings: string[]; metadata: Record<string, string>;
}): Promise<TrendsOutcome | null> {
  const inRun = new Set(o.recordings);
  const digest = trendsDigest(spec, o.store, inRun, o.metadata);
  const kept = await stillCurrent(out, digest);
  if (kept) return kept.outcome;
  await rm(keptPath(out), { force: true });
  const files: Record<string, number> = {};
  const spectra = join(out, 'spectra.parquet'), trendsFile = join(out, 'trends.parquet');
  if (spec.spectrum) {
    await writeStreamedTable(spectra, SPECTRA_TABLE, batched(spectrumRows(entriesOf(o.store, o.recordings))), o.metadata);
    files[spectra] = (await stat(spectra)).size;
  } else await rm(spectra, { force: true });
  let outcome: TrendsOutcome | null = null;
  if (!o.trends) await rm(trendsFile, { force: true });
  else {
    const history = await readHistory(out, spec, o.trends, inRun, everyEntry(o.store));
    const scored = scoreHistory(history, o.trends);
    const report = changesReport(history, scored, o.trends);
    await writeStreamedTable(trendsFile, TRENDS_TABLE, batched(trendRows(history, scored)), o.metadata);
    files[trendsFile] = (await stat(trendsFile)).size;
    const pictures = report.items.length ? await gatherPictures(history, scored, report, o.trends, spec, everyEntry(o.store)) : [];
    outcome = { report, html: await changesHtml(report, pictures) };
  }
  await writeFileAtomic(keptPath(out), JSON.stringify({ digest, files, outcome } satisfies KeptTrends));
  return outcome;
}
