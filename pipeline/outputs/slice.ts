// In a worker: a slice of the run's recordings (consecutive in table order) read back from the packs and assembled into
// Arrow batches for every table, quality.json parts and quality.html pieces, so the main thread only puts them in order.
import { open, type FileHandle } from 'node:fs/promises';
import * as arrow from 'apache-arrow';
import type { ReductionSpec } from '../../spec/reduction.js';
import { assembleRecording } from '../reduce/assemble.js';
import type { FeatureRow } from '../reduce/result.js';
import { readRecord, type Located } from '../store/pack.js';
import { decodeResults, joinEntry, recordBody } from '../store/record.js';
import { toArrowTable, type TableColumn } from './parquet.js';
import { countRecording, emptyTotals, failLines, qualityRecording, type QualityTotals } from './quality.js';
import { channelSection, overviewRow, type OverviewRow } from './report-html.js';

export interface SliceItem { loc: Located; labels: Record<string, string> }
export interface SliceTask { items: SliceItem[]; spec: ReductionSpec; tables: Record<string, TableColumn[]>; metadata: Record<string, string> }

/** A channel that is not ok: its section of quality.html (pictures are added for the first few of the whole run). */
export interface Section { recording: string; channel: string; severity: 'warn' | 'fail'; html: string; loc: Located }

export interface SliceOutput {
  /** Arrow IPC stream of each table's rows (features and every secondary table); null where the slice has none. */
  tables: Record<string, Uint8Array | null>;
  /** Each recording's part of quality.json, as JSON text. */
  quality: string[];
  overview: OverviewRow[];
  sections: Section[];
  totals: QualityTotals;
  failLines: string[];
}

async function withHandles<T>(fn: (read: (loc: Located) => Promise<Buffer>) => Promise<T>): Promise<T> {
  const handles = new Map<string, FileHandle>();
  try {
    return await fn(async (loc) => readRecord(handles.get(loc.file) ?? handles.set(loc.file, await open(loc.file, 'r')).get(loc.file)!, loc));
  } finally {
    for (const fh of handles.values()) await fh.close();
  }
}

export async function assembleSlice(task: SliceTask): Promise<SliceOutput> {
  const rows: Record<string, FeatureRow[]> = Object.fromEntries(Object.keys(task.tables).map((t) => [t, []]));
  const out: SliceOutput = { tables: {}, quality: [], overview: [], sections: [], totals: emptyTotals(), failLines: [] };
  await withHandles(async (read) => {
    for (const { loc, labels } of task.items) {
      const entry = joinEntry(loc.facts, decodeResults(recordBody(await read(loc))));
      const r = assembleRecording(entry, labels, task.spec);
      rows.features.push(...r.rows);
      for (const [name, list] of Object.entries(r.tables)) if (rows[name]) for (const row of list) rows[name].push(row);
      const q = qualityRecording(r);
      out.quality.push(JSON.stringify(q, null, 2));
      countRecording(out.totals, q);
      out.overview.push(overviewRow(q));
      out.failLines.push(...failLines(q));
      for (const c of q.channels) if (c.severity !== 'ok') out.sections.push({ recording: q.recording, channel: c.channel, severity: c.severity, html: channelSection(q.recording, c), loc });
    }
  });
  for (const [name, columns] of Object.entries(task.tables)) {
    out.tables[name] = rows[name].length ? arrow.tableToIPC(toArrowTable(columns, rows[name], task.metadata), 'stream') : null;
  }
  return out;
}

/** The stored pictures of the channels the report shows them for. */
export async function picturesOf(wanted: { loc: Located; channel: string }[]): Promise<(string[] | null)[]> {
  return withHandles(async (read) => {
    const out: (string[] | null)[] = [];
    for (const { loc, channel } of wanted) {
      const results = decodeResults(recordBody(await read(loc)));
      const c = results.base?.channels.findIndex((x) => x.name === channel) ?? -1;
      const ev = c >= 0 ? results.groups.quality?.evidence[c] : null;
      out.push((ev?.charts as string[] | undefined) ?? null);
    }
    return out;
  });
}
