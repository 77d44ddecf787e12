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
import { countRecording, emptyTotals, failLines, MAX_FAIL_LINES, qualityRecording, type QualityTotals } from './quality.js';
import { NEEDS_A_LOOK } from '../../stages/quality/flag.js';
import { channelSection, MAX_PICTURED, noteLine, overviewRow } from './report-html.js';
import { jsonPieces } from './staged.js';

export interface SliceItem { loc: Located; labels: Record<string, string> }
export interface SliceTask { items: SliceItem[]; spec: ReductionSpec; tables: Record<string, TableColumn[]>; metadata: Record<string, string> }

/** A channel that may be pictured: the first few not ok of the whole run, unusable ones first, are. */
export interface Candidate { loc: Located; channel: string }

export interface SliceOutput {
  /** Arrow IPC stream of each table's rows (features and every secondary table); null where the slice has none. */
  tables: Record<string, Uint8Array | null>;
  /** The recordings' parts of quality.json, each after a separator (the first one's is dropped), as one text. */
  quality: string;
  recordings: number;
  /** quality.html pieces as JSON lines: overview rows, and the sections of channels that fail and that warn. */
  overview: string;
  sections: { fail: string; warn: string };
  /** quality.html rows of the notes on channels otherwise ok, as JSON lines. */
  notes: string;
  /** Per severity, the slice's first channels that may be pictured, and how many sections there are. */
  candidates: { fail: Candidate[]; warn: Candidate[] };
  counts: { fail: number; warn: number };
  totals: QualityTotals;
  /** The first failed flags as terminal lines, and how many there are. */
  failLines: string[];
  failCount: number;
  /** Channel names in order of first appearance (the overview's columns). */
  channels: string[];
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
  const out: SliceOutput = { tables: {}, quality: '', recordings: 0, overview: '', sections: { fail: '', warn: '' }, notes: '', candidates: { fail: [], warn: [] }, counts: { fail: 0, warn: 0 }, totals: emptyTotals(), failLines: [], failCount: 0, channels: [] };
  const names = new Set<string>();
  const quality: string[] = [], overview: string[] = [], sections = { fail: [] as string[], warn: [] as string[] }, notes: string[] = [];
  await withHandles(async (read) => {
    for (const { loc, labels } of task.items) {
      const entry = joinEntry(loc.facts, decodeResults(recordBody(await read(loc))));
      const r = assembleRecording(entry, labels, task.spec);
      rows.features.push(...r.rows);
      for (const [name, list] of Object.entries(r.tables)) if (rows[name]) for (const row of list) rows[name].push(row);
      const q = qualityRecording(r);
      quality.push(jsonPieces.item(JSON.stringify(q, null, 2), 1));
      countRecording(out.totals, q);
      overview.push(JSON.stringify(overviewRow(q)));
      const lines = failLines(q);
      out.failCount += lines.length;
      out.failLines.push(...lines.slice(0, MAX_FAIL_LINES - out.failLines.length));
      for (const c of q.channels) names.add(c.channel);
      for (const c of q.channels) {
        if (!NEEDS_A_LOOK.has(c.severity)) {
          for (const f of c.flags) if (f.severity === 'note') notes.push(JSON.stringify(noteLine(q.recording, c.channel, f)));
          continue;
        }
        const sev = c.severity as 'fail' | 'warn';
        sections[sev].push(JSON.stringify(channelSection(q.recording, c)));
        if (out.counts[sev]++ < MAX_PICTURED) out.candidates[sev].push({ loc, channel: c.channel });
      }
    }
  });
  out.recordings = quality.length;
  out.channels = [...names];
  out.quality = quality.join('');
  out.overview = overview.map((l) => l + '\n').join('');
  out.sections = { fail: sections.fail.map((l) => l + '\n').join(''), warn: sections.warn.map((l) => l + '\n').join('') };
  out.notes = notes.map((l) => l + '\n').join('');
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
