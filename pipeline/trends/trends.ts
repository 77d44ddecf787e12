// After a run's results are stored: every recording's spectrum (spectra.parquet), and each watched feature against its channel's
// baseline (trends.parquet, and what changed for quality.json, quality.html and the terminal).
import { rm } from 'node:fs/promises';
import { join } from 'node:path';
import { unpackSpectrum } from '../../stages/spectra.js';
import type { ReductionSpec } from '../../spec/reduction.js';
import { readEntry, storedEntries, type CacheEntry } from '../plan/cache.js';
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

/** The stored entries of the named recordings, one at a time (for a merge, which holds no entries in memory). */
export async function* entriesNamed(out: string, recordings: string[]): AsyncGenerator<CacheEntry> {
  for (const r of recordings) {
    const e = await readEntry(out, r);
    if (e) yield e;
  }
}

/**
 * Writes spectra.parquet (when the spec has a spectrum section) from the run's entries, in the order given, and with trends on,
 * trends.parquet from the history the output folder keeps. A table whose section is off is removed, so none is left stale.
 */
export async function writeTrendsAndSpectra(out: string, spec: ReductionSpec, o: {
  trends: TrendOptions | null; entries: Iterable<CacheEntry> | AsyncIterable<CacheEntry>; recordings: Iterable<string>; metadata: Record<string, string>;
}): Promise<TrendsOutcome | null> {
  if (spec.spectrum) await writeStreamedTable(join(out, 'spectra.parquet'), SPECTRA_TABLE, batched(spectrumRows(o.entries)), o.metadata);
  else await rm(join(out, 'spectra.parquet'), { force: true });
  if (!o.trends) {
    await rm(join(out, 'trends.parquet'), { force: true });
    return null;
  }
  const history = await readHistory(out, spec, o.trends, new Set(o.recordings));
  const scored = scoreHistory(history, o.trends);
  const report = changesReport(history, scored, o.trends);
  await writeStreamedTable(join(out, 'trends.parquet'), TRENDS_TABLE, batched(trendRows(history, scored)), o.metadata);
  const pictures = report.items.length ? await gatherPictures(history, scored, report, o.trends, spec, storedEntries(out)) : [];
  return { report, html: await changesHtml(report, pictures) };
}
