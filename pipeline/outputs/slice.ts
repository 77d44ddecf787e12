// In a worker: a slice of the run's recordings (consecutive in table order) read back from the packs and assembled into
// Arrow batches for every table, quality.json parts and quality.html pieces, so the main thread only puts them in order.
import * as arrow from 'apache-arrow';
import type { ReductionSpec } from '../../spec/reduction.js';
import { assembleRecording, assemblyOf } from '../reduce/assemble.js';
import { RecordReader, type Place } from '../store/pack.js';
import { decodeResults, joinEntry, recordBody, recordFacts, type CacheEntry } from '../store/record.js';
import type { TableColumn } from './parquet.js';
import { TableRows } from './table-rows.js';
import { RowsGather, type RowsPart } from './rows-part.js';
import { columnsFor, columnsTable } from './arrow-columns.js';
import { addSpectra } from './spectra-rows.js';
import { outputTables } from './output-tables.js';
import { countRecording, emptyTotals, failGroupsOf, qualityRecording, type QualityRecording, type QualityTotals } from './quality.js';
import { addFailGroups, flagKey, isNewFlag, type EarlierFlags, type FailGroup } from './quality-news.js';
import { NEEDS_A_LOOK } from '../../stages/quality/flag.js';
import { foldCells, noteLine, overviewRow } from './report-html.js';
import { addFolds, cutRows, foldsOf, type FlagFold } from './flag-folds.js';
import { jsonPieces } from './staged.js';
import { TextBytes } from './text-bytes.js';
import { slicePieces } from './slice-pieces.js';
import { ownBuffers } from '../store/release.js';
import type { PackedEvidence } from '../../stages/quality/evidence.js';

/** A recording of the slice: where its entry lies, its group's present name and the group's labels. */
export interface SliceItem { at: Place; recording: string; group: string; labels: Record<string, string> }
/**
 * A slice to assemble, with what its tables are made from (the spec, the label columns, whether spectra.parquet is among
 * them): the worker works the tables' columns out itself (`outputTables`), once for the run, rather than receiving some
 * 30 KB of column descriptions with every slice.
 */
export interface SliceTask {
  items: SliceItem[]; spec: ReductionSpec; labels: string[]; spectra: boolean;
  /** The flags the output folder's previous run reported (quality-news.ts), to mark the new ones; absent: none marked (a shard's part). */
  earlierFlags?: EarlierFlags;
}

/** The tables' columns for the run's slices, kept by this thread: every slice of a run asks for the same. */
let known: { key: string; tables: Record<string, TableColumn[]> } | null = null;
function tablesOf(task: SliceTask): Record<string, TableColumn[]> {
  const key = JSON.stringify([task.spec, task.labels, task.spectra]);
  if (known?.key !== key) known = { key, tables: outputTables(task.spec, task.labels, task.spectra) };
  return known.tables;
}

/** A channel that may be pictured: the first few not ok of the whole run, in the report's order, are. */
export interface Candidate { at: Place; recording: string; channel: string }

/** The slice's texts and tables travel as bytes, moved to the main thread rather than copied. */
export interface SliceOutput {
  /** Arrow IPC stream of features' rows (and spectra's); null where the slice has none. */
  tables: Record<string, Uint8Array | null>;
  /** Each secondary table's rows as columns, in parts (the main thread cuts them into record batches). */
  rows: Record<string, RowsPart[]>;
  /** The memory those columns lie in, each buffer the slice's own whole (a long table's stored entry among them): moved, not copied. */
  held: Uint8Array[];
  /** The recordings' parts of quality.json, each after a separator (the first one's is dropped), as UTF-8. */
  quality: Uint8Array;
  recordings: number;
  /** quality.html's overview rows as JSON lines (UTF-8). */
  overview: Uint8Array;
  /** The flags at warn or fail gathered per channel and flag (flag-folds.ts): quality.html's entries, each holding at most its newest rows. */
  folds: FlagFold[];
  /** quality.html rows of the notes on channels otherwise ok, as JSON lines (UTF-8). */
  notes: Uint8Array;
  totals: QualityTotals;
  /** The failed flags gathered per channel and flag, and how many there are over the recordings. */
  fails: FailGroup[];
  failCount: number;
  /** Each channel's recordings in the slice, by group and channel (flagKey with no flag): the summary's "in n of m". */
  channelRecordings: Record<string, number>;
  /** The flags at warn or fail, by flagKey, at the worst severity the slice holds them: what the run reports, for the next. */
  flagged: Record<string, 'warn' | 'fail'>;
  /** Channel names in order of first appearance (the overview's columns). */
  channels: string[];
}

/** An entry larger than this leaves its tables' columns in its pack: the main thread reads them a record batch at a time. */
const COLUMNS_LEFT_BYTES = 8 << 20;

/** An entry read back; a large entry's table columns left in its pack (`tables` false: not read at all). */
type ReadEntry = (at: Place, recording: string, tables?: boolean) => CacheEntry;

async function withRecords<T>(fn: (read: ReadEntry) => Promise<T>): Promise<T> {
  const records = new RecordReader();
  try {
    return await fn((at, recording, tables = true) => {
      if (at.length <= COLUMNS_LEFT_BYTES) { const record = records.read(at, recording); return joinEntry(recordFacts(record), decodeResults(recordBody(record))); }
      const { bytes, bodyAt } = records.readWithoutColumns(at, recording);
      return joinEntry(recordFacts(bytes), decodeResults(recordBody(bytes), tables ? { file: at.file, offset: bodyAt } : false));
    });
  } finally {
    records.close();
  }
}

export async function assembleSlice(task: SliceTask): Promise<SliceOutput> {
  // Rows go to columns as they are made: no row objects stay on the heap meanwhile. The spectra's bins go to their
  // columns as whole arrays.
  const { spectra: spectraColumns, features: featureColumns, ...secondaryTables } = tablesOf(task);
  const features = new TableRows(featureColumns);
  const gathered = Object.fromEntries(Object.entries(secondaryTables).map(([t, columns]) => [t, new RowsGather(columns)]));
  const spectra = spectraColumns ? columnsFor(spectraColumns) : null;
  const totals = emptyTotals(), fails = new Map<string, FailGroup>(), folds = new Map<string, FlagFold>(), channelRecordings: Record<string, number> = {}, flagged: SliceOutput['flagged'] = {};
  let failCount = 0, recordings = 0;
  const names = new Set<string>();
  // Texts go to bytes piece by piece, so nothing the size of the slice stays on the heap as strings.
  const quality = new TextBytes(), overview = new TextBytes(), notes = new TextBytes(4 << 10);
  const assembly = assemblyOf(task.spec);
  await withRecords(async (read) => {
    for (const { at, recording, group, labels } of task.items) {
      // Under the group's present name: a group renamed in archive.yaml keeps its recordings' stored results.
      const entry = { ...read(at, recording), group };
      if (spectra) addSpectra(entry, spectra);
      const r = assembleRecording(entry, labels, task.spec, assembly);
      for (const row of r.rows) features.add(row);
      for (const [name, list] of Object.entries(r.secondary)) if (gathered[name]) for (const source of list) gathered[name].add(source);
      const q = markNewFlags(qualityRecording(r), task.earlierFlags);
      const startMs = r.header?.start_time ? Date.parse(r.header.start_time) : null;
      // One line a recording: quality.json is for programs (quality.html is the read), and indenting made it a third larger.
      quality.add(jsonPieces.item(JSON.stringify(q), 1));
      recordings++;
      countRecording(totals, q);
      overview.add(JSON.stringify(overviewRow(q)) + '\n');
      const failed = failGroupsOf(q, Number.isFinite(startMs) ? startMs : null);
      failCount += failed.length;
      addFailGroups(fails, failed);
      addFolds(folds, foldsOf(q, at, Number.isFinite(startMs) ? startMs : null, foldCells));
      for (const c of q.channels) names.add(c.channel);
      for (const c of q.channels) {
        const k = flagKey(q.group, c.channel, '');
        channelRecordings[k] = (channelRecordings[k] ?? 0) + 1;
        for (const f of c.flags) if (f.severity === 'fail' || (f.severity === 'warn' && flagged[flagKey(q.group, c.channel, f.name)] !== 'fail')) flagged[flagKey(q.group, c.channel, f.name)] = f.severity;
        if (!NEEDS_A_LOOK.has(c.severity)) for (const f of c.flags) if (f.severity === 'note') notes.add(JSON.stringify(noteLine(q.recording, c.channel, f)) + '\n');
      }
    }
  });
  const tables: SliceOutput['tables'] = {};
  // Names and types only: each table's writer keeps the described schema (units, descriptions, the run's metadata) of the
  // empty first batch the main thread gave it, and a described schema cost a slice of features some 0.8 ms to encode.
  tables.features = features.length ? arrow.tableToIPC(features.table({}, false), 'stream') : null;
  const rows = Object.fromEntries(Object.entries(gathered).map(([name, g]) => [name, g.done()]));
  const held = Object.values(gathered).flatMap((g) => [...g.held].map((b) => new Uint8Array(b)));
  if (spectraColumns) tables.spectra = spectra!.recording.length ? arrow.tableToIPC(columnsTable(spectraColumns, spectra!, {}, false), 'stream') : null;
  return {
    tables, rows, held, quality: quality.done(), recordings, overview: overview.done(), folds: [...folds.values()].map((f) => cutRows(f)), notes: notes.done(),
    totals, fails: [...fails.values()], failCount, channelRecordings, flagged, channels: [...names],
  };
}

/** The recording's flags at warn or fail marked `new` where the previous report did not hold them at that severity (none marked without `earlier`). */
function markNewFlags(q: QualityRecording, earlier: EarlierFlags | undefined): QualityRecording {
  if (earlier === undefined) return q;
  return { ...q, channels: q.channels.map((c) => ({ ...c, flags: c.flags.map((f) => (f.severity === 'warn' || f.severity === 'fail' ? { ...f, new: isNewFlag(earlier, flagKey(q.group, c.channel, f.name), f.severity) } : f)) })) };
}

/** The memory a slice's output owns whole, to move rather than copy. */
export const sliceBuffers = (s: SliceOutput): ArrayBuffer[] => ownBuffers(slicePieces(s));

/**
 * The pictures of the channels the report shows them for, drawn from their stored data (entries stored before the data
 * were kept hold the pictures themselves).
 */
export async function picturesOf(wanted: Candidate[]): Promise<(string[] | null)[]> {
  return withRecords(async (read) => {
    const out: (string[] | null)[] = [];
    for (const { at, recording, channel } of wanted) {
      const results = read(at, recording, false);
      const c = results.base?.channels.findIndex((x) => x.name === channel) ?? -1;
      const ev = c >= 0 ? results.groups.quality?.evidence[c] : null;
      if (ev?.data) {
        // The charting modules (vega, vega-lite) load only when a report shows pictures.
        const [{ evidenceCharts }, { unpackEvidence }] = await Promise.all([import('./charts.js'), import('../../stages/quality/evidence.js')]);
        out.push(await evidenceCharts(unpackEvidence(ev.data as PackedEvidence), results.base!.channels[c].unit));
      } else out.push((ev?.charts as string[] | undefined) ?? null);
    }
    return out;
  });
}
