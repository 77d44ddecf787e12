// The reduced tables for export, read back from the Parquet files and reports a run wrote: each table's columns and row
// count at once, its rows in batches as they are written out, so no table is ever held whole in memory.
import { openAsBlob } from 'node:fs';
import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { UsageError } from '../declare/yaml-file.js';

export type CellKind = 'text' | 'number' | 'integer' | 'time';
/** `exact`: a key, axis, setting or count, which --digits leaves whole (EXACT_COLUMNS). */
export interface ExportColumn { name: string; unit: string; kind: CellKind; exact?: boolean }
export type Cell = string | number | bigint | null;
/**
 * A table's columns, its number of rows and its rows in batches (read afresh each time they are asked for); one read
 * from a Parquet file also names the run that wrote it (its `quern.run_id`, null when absent).
 */
export interface ExportTable { name: string; columns: ExportColumn[]; rowCount: number; batches: () => AsyncIterable<Cell[][]>; runId?: string | null }

/**
 * Number columns --digits never rounds, by table: those that name a row (a spectrum's bin, a window's start and length, a
 * cycle's range and mean, which rounded merge rows: 1001.95 and 1003.9 Hz both read 1000 at 3 digits), those the sample
 * rate and declaration alone give (settings, not measurements), and counts.
 */
export const EXACT_COLUMNS: Record<string, ReadonlySet<string>> = {
  features: new Set(['sample_rate', 'duration_s', 'n_nonfinite', 'spike_count', 'cycles_total', 'revolutions', 'pulses_missing', 'pulses_extra', 'resolution_bits', 'alias_margin', 'alias_frequency_hz', 'samples_per_cycle', 'peak_underestimate']),
  windows: new Set(['window_start_s', 'window_s']),
  cycles: new Set(['range', 'mean', 'count']),
  spectra: new Set(['frequency_hz']),
};

/** Rows read from a Parquet table at a time: a row group's, as the tables are written (outputs/parquet-stream.ts). */
export const BATCH_ROWS = 65_536;

/** A table already in memory (the quality flags, the wide layout: a row per channel or per recording), as one batch. */
export const inMemory = (name: string, columns: ExportColumn[], rows: Cell[][], runId?: string | null): ExportTable =>
  ({ name, columns, rowCount: rows.length, batches: async function* () { if (rows.length) yield rows; }, runId });

const unreadable = (path: string, e: unknown) =>
  // A table cut short (an interrupted copy, a full disk elsewhere) is a damaged input, not a fault in quern.
  new UsageError(`${path}: not a readable Parquet table (${(e as Error).message}); run quern reduce again to write it afresh, or copy it again`);

/** A Parquet table opened for export: its schema and row count from the footer; its rows read `batchRows` at a time. */
export async function openParquetTable(path: string, name: string, batchRows = BATCH_ROWS): Promise<ExportTable> {
  let blob: Blob;
  try {
    // A Blob backed by the file: the reader fetches the footer and then one row group's column chunks at a time.
    blob = await openAsBlob(path);
  } catch {
    throw new UsageError(`${path}: missing; export reads a folder that quern reduce (or quern merge) wrote`);
  }
  // The Parquet reader loads only when a table is read back (quern export), not on every command.
  const [arrow, { ParquetFile }] = await Promise.all([import('apache-arrow'), import('../outputs/parquet-wasm.js').then((m) => m.parquetWasm())]);
  let schema: import('apache-arrow').Schema, rowCount: number;
  try {
    const file = await ParquetFile.fromFile(blob);
    try {
      schema = arrow.tableFromIPC(file.schema().intoIPCStream()).schema;
      rowCount = Number(file.metadata().fileMetadata().numRows());
    } finally { file.free(); }
  } catch (e) {
    throw unreadable(path, e);
  }
  const columns: ExportColumn[] = schema.fields.map((f) => ({
    name: f.name,
    unit: f.metadata.get('unit') ?? '',
    kind: arrow.DataType.isTimestamp(f.type) ? 'time' : arrow.DataType.isInt(f.type) ? 'integer' : arrow.DataType.isFloat(f.type) ? 'number' : 'text',
    exact: EXACT_COLUMNS[name]?.has(f.name) ?? false,
  }));
  async function* batches(): AsyncIterable<Cell[][]> {
    let file: { free(): void } | null = null, reader: ReadableStreamDefaultReader | null = null;
    try {
      const opened = await ParquetFile.fromFile(blob);
      file = opened;
      const stream = (reader = (await opened.stream({ batchSize: batchRows })).getReader());
      for (;;) {
        const { done, value } = await stream.read();
        if (done) break;
        const table = arrow.tableFromIPC(value.intoIPCStream());
        yield rowsOf(table, columns);
      }
    } catch (e) {
      throw e instanceof UsageError ? e : unreadable(path, e);
    } finally {
      await reader?.cancel().catch(() => {});
      file?.free();
    }
  }
  return { name, columns, rowCount, batches, runId: schema.metadata.get('quern.run_id') ?? null };
}

/** An Arrow table's rows as cells: instants in milliseconds, integers as bigint, nulls as null. */
function rowsOf(table: import('apache-arrow').Table, columns: ExportColumn[]): Cell[][] {
  const vectors = columns.map((c) => table.getChild(c.name)!);
  const rows: Cell[][] = [];
  for (let i = 0; i < table.numRows; i++) {
    rows.push(vectors.map((v, j) => {
      const x = v.get(i);
      if (x == null) return null;
      if (columns[j].kind === 'time') return Number(x instanceof Date ? x.getTime() : x);
      if (columns[j].kind === 'integer') return typeof x === 'bigint' ? x : BigInt(x);
      return x as Cell;
    }));
  }
  return rows;
}

/** One row per channel × flag (and per unreadable recording), from quality.json. */
export async function readQualityFlags(dir: string): Promise<ExportTable> {
  const q = JSON.parse(await readFile(join(dir, 'quality.json'), 'utf8'));
  const columns: ExportColumn[] = [
    { name: 'recording', unit: '', kind: 'text' }, { name: 'channel', unit: '', kind: 'text' }, { name: 'flag', unit: '', kind: 'text' },
    { name: 'severity', unit: '', kind: 'text' }, { name: 'value', unit: '', kind: 'number' }, { name: 'threshold', unit: '', kind: 'text' },
    { name: 'message', unit: '', kind: 'text' }, { name: 'evidence', unit: '', kind: 'text' },
  ];
  const rows: Cell[][] = [];
  for (const r of q.recordings) {
    if (r.status === 'failed') rows.push([r.recording, null, 'readable', 'fail', null, 'the recording must be readable and agree with its declaration', r.reason ?? '', '{}']);
    for (const c of r.channels) for (const f of c.flags) rows.push([r.recording, c.channel, f.name, f.severity, f.value, f.threshold, f.message, JSON.stringify(f.evidence)]);
  }
  return inMemory('quality flags', columns, rows, typeof q.run_id === 'string' ? q.run_id : null);
}

/** The identity columns that stay unprefixed in the wide layout (one value per recording). */
const PER_RECORDING = new Set(['recording', 'group', 'sample_rate', 'n', 'duration_s', 'start_time']);

/**
 * A column's unit with the channel's own put in for "[unit]"; raised to a power, a unit of more than one symbol goes in
 * parentheses, (m/s^2)^2, since m/s^2^2 reads as m/s⁴.
 */
export function withChannelUnit(template: string, unit: string): string {
  const oneSymbol = /^[\p{L}°%]+$/u.test(unit);
  return template.replace(/\[unit\](?=\^|²|³)/g, oneSymbol ? unit : `(${unit})`).replace(/\[unit\]/g, unit);
}

/** One row per recording, channel-prefixed columns ("acc_de.rms"), for comparing recordings side by side. */
export async function widen(features: ExportTable, labels: string[]): Promise<ExportTable> {
  const col = new Map(features.columns.map((c, i) => [c.name, i]));
  const keep = features.columns.filter((c) => PER_RECORDING.has(c.name) || labels.includes(c.name));
  const perChannel = features.columns.filter((c) => !PER_RECORDING.has(c.name) && !labels.includes(c.name) && c.name !== 'channel');
  const channels: string[] = [];
  const unitOf = new Map<string, Set<string>>();
  const byRecording = new Map<string, Cell[][]>();
  // The features hold a row per channel, not per window: read whole, as the layout needs every channel of a recording.
  for await (const batch of features.batches()) for (const row of batch) {
    const ch = String(row[col.get('channel')!]);
    if (!channels.includes(ch)) channels.push(ch);
    (unitOf.get(ch) ?? unitOf.set(ch, new Set()).get(ch)!).add(String(row[col.get('unit')!]));
    const rec = String(row[col.get('recording')!]);
    (byRecording.get(rec) ?? byRecording.set(rec, []).get(rec)!).push(row);
  }
  // The channel's unit replaces "[unit]" where every recording agrees on it.
  const resolve = (unit: string, ch: string) => (unitOf.get(ch)!.size === 1 ? withChannelUnit(unit, [...unitOf.get(ch)!][0]) : unit);
  const columns: ExportColumn[] = [...keep, ...channels.flatMap((ch) => perChannel.map((c) => ({ ...c, name: `${ch}.${c.name}`, unit: resolve(c.unit, ch) })))];
  const rows = [...byRecording.values()].map((rows) => {
    const first = rows[0];
    const byChannel = new Map(rows.map((r) => [String(r[col.get('channel')!]), r]));
    return [...keep.map((c) => first[col.get(c.name)!]), ...channels.flatMap((ch) => perChannel.map((c) => byChannel.get(ch)?.[col.get(c.name)!] ?? null))];
  });
  return inMemory('features wide', columns, rows);
}
