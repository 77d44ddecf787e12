// Secondary-table rows packed into float64 columns: the same rows as the plain row objects they stand for, through many
// chunks, a column that appears late, nulls and NaN; stored raw after the entry's JSON and read back (a value that is not
// finite reads null there, as JSON reads the rest of an entry); entries stored with row objects still read.
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { PackedRows } from '../stages/packed-rows.js';
import { columnsAt, decodeResults, encodeRecord, encodeRecordPieces, HEADER_BYTES, recordBody, type EntryFacts, type EntryResults } from '../pipeline/store/record.js';
import { RecordReader, RecordsInOrder } from '../pipeline/store/pack.js';
import { sha256 } from '../pipeline/store/record.js';
import { assembleRecording } from '../pipeline/reduce/assemble.js';
import { RowsGather, partStreams } from '../pipeline/outputs/rows-part.js';
import { WINDOW_TABLE } from '../pipeline/outputs/tables.js';
import * as arrow from 'apache-arrow';
import { tempDir } from './helpers.js';

type Row = Record<string, number | null>;

/** Invented rows: two channels taking turns in runs of uneven length, a column only some rows have, nulls and NaN among the values. */
function rowsOf(n: number): { channel: number; row: Row }[] {
  const out: { channel: number; row: Row }[] = [];
  for (let i = 0; i < n; i++) {
    const channel = Math.floor(i / 7) % 3 === 2 ? 1 : 0;
    const row: Row = { window_start_s: i * 0.25, window_s: 0.25, mean: i % 11 === 5 ? null : Math.sin(i), rms: i % 13 === 4 ? NaN : Math.cos(i) ** 2, peak: i % 17 === 3 ? null : i };
    if (i >= 300 && channel === 1) row.speed_rpm = i % 19 === 0 ? null : 600 + i;
    out.push({ channel, row });
  }
  return out;
}

/** The row object a packed row stands for: every column the table has, null where the row had none. */
const expected = (row: Row, names: string[]): Row => Object.fromEntries(names.map((n) => [n, row[n] === undefined ? null : row[n]]));

const facts = { recording: 'long.wav', group: 'rig', status: 'reduced', version: '0', identity: { size: 1, mtimeMs: 2, hash: null }, readAtMs: 3, declKey: 'k', groupKeys: {}, seconds: 0.5, frames: 10, sampleRate: 1000, startTime: null, channels: 2, notes: { '': [] }, storedAt: 4 } as EntryFacts;
const channels = [{ name: 'acc', quantity: 'acceleration', unit: 'm/s²' }, { name: 'tacho', quantity: 'voltage', unit: 'V' }];
const resultsWith = (tables: Record<string, unknown>) => ({
  recording: 'long.wav', group: 'rig', status: 'reduced',
  base: { frames: 10, sampleRate: 1000, header: { format: 'wav', encoding: 'float32', bits: null, start_time: null }, channels, notes: [] },
  groups: { windows: { columns: [{}, {}], flags: [[], []], evidence: [null, null], tables, notes: [] } },
}) as unknown as EntryResults;

describe('packed rows', () => {
  const n = 1000, given = rowsOf(n);
  // Chunks of 4, 8 and 16 rows (then 16 each): some 65 chunks a column.
  const packed = new PackedRows(4, 16);
  for (const { channel, row } of given) packed.add(channel, row);

  it('hold every value as added, null as null and NaN as NaN, across many chunks and a column that appears late', () => {
    expect(packed.length).toBe(n);
    expect(packed.names).toEqual(['window_start_s', 'window_s', 'mean', 'rms', 'peak', 'speed_rpm']);
    given.forEach(({ row }, i) => expect(packed.row(i)).toEqual(expected(row, packed.names)));
    expect(packed.row(4).rms).toBeNaN();
    expect(packed.row(5).mean).toBeNull();
    expect(packed.chunksOf(0).length).toBeGreaterThan(60);
    // The columns' chunks, in order, are every value (nulls as NaN).
    const rms = Float64Array.from(given.map(({ row }) => row.rms ?? NaN));
    expect(packed.column(3)).toEqual(rms);
  });

  it('hold the same rows when added as values in a fixed order, a row costing no object', () => {
    const typed = new PackedRows(4, 16);
    const names = ['window_start_s', 'window_s', 'mean', 'rms', 'peak'];
    const plain = typed.columnsOf(names), withSpeed = typed.columnsOf([...names, 'speed_rpm']);
    for (const { channel, row } of given) {
      if ('speed_rpm' in row) typed.addValues(channel, withSpeed, [...names, 'speed_rpm'].map((n) => row[n] ?? null));
      else typed.addValues(channel, plain, names.map((n) => row[n] ?? null));
    }
    expect(typed.names).toEqual(packed.names);
    expect(typed.runs).toEqual(packed.runs);
    for (let i = 0; i < n; i++) expect(typed.row(i)).toEqual(packed.row(i));
  });

  it('keep each row\'s channel as runs of consecutive rows', () => {
    const channelOf: number[] = [];
    for (const [c, from, to] of packed.channelRuns()) for (let i = from; i < to; i++) channelOf.push(c);
    expect(channelOf).toEqual(given.map((g) => g.channel));
    // A run a change of channel: 14 rows of channel 0, then 7 of channel 1, over and over.
    expect(packed.runs.length / 2).toBe(1 + given.filter((g, i) => i > 0 && g.channel !== given[i - 1].channel).length);
  });

  it('are stored raw after the JSON and read back as views, a value that is not finite reading null', () => {
    const record = encodeRecord(facts, resultsWith({ windows: packed }));
    const own = Buffer.alloc(record.length);
    own.set(record);
    const body = recordBody(own);
    expect(body[0]).toBe(0xfe);
    const back = decodeResults(body).groups.windows.tables.windows as PackedRows;
    expect(back.length).toBe(n);
    expect(back.runs).toEqual(packed.runs);
    // Aligned to 8 bytes from the record's start: the column is the record's own memory, not a copy.
    expect(back.column(0).buffer).toBe(own.buffer);
    given.forEach(({ row }, i) => {
      const stored = Object.fromEntries(Object.entries(expected(row, packed.names)).map(([k, v]) => [k, v !== null && Number.isFinite(v) ? v : null]));
      expect(back.row(i)).toEqual(stored);
    });
  });

  it('of no rows (a recording shorter than one window) are stored and read back as a table of no rows', () => {
    const empty = new PackedRows(4, 16);
    const body = recordBody(Buffer.from(encodeRecord(facts, resultsWith({ windows: empty }))));
    const back = decodeResults(body).groups.windows.tables.windows as PackedRows;
    expect(back).toBeInstanceOf(PackedRows);
    expect(back.length).toBe(0);
    const gather = new RowsGather(WINDOW_TABLE);
    gather.add({ rows: back, recording: 'short.wav', channels });
    expect(gather.parts.reduce((s, p) => s + p.length, 0)).toBe(0);
  });

  it('are written in pieces whose checksum is the whole record\'s, and a reader may leave the columns unread', () => {
    const { head, tail } = encodeRecordPieces(facts, resultsWith({ windows: packed }));
    const whole = Buffer.concat([head, ...tail]);
    expect(whole).toEqual(Buffer.from(encodeRecord(facts, resultsWith({ windows: packed }))));
    const bodyStart = HEADER_BYTES + whole.readUInt32LE(4);
    expect(sha256(whole.subarray(bodyStart)).equals(whole.subarray(44, 76))).toBe(true);
    const pack = join(tempDir(), 'entries.pack');
    writeFileSync(pack, whole);
    const loc = { file: pack, offset: 0, length: whole.length, bodySha: whole.subarray(44, 76).toString('hex') };
    const reader = new RecordReader();
    const { bytes, bodyAt } = reader.readWithoutColumns(loc, 'long.wav');
    reader.close();
    expect(bytes.length).toBe(bodyStart + columnsAt(whole.subarray(bodyStart))!);
    const left = decodeResults(recordBody(bytes), { file: pack, offset: bodyAt }).groups.windows.tables.windows as unknown as { at: number; length: number; names: string[] };
    // The first column where the reader says: the window starts, as stored.
    const first = new Float64Array(whole.buffer.slice(whole.byteOffset + left.at, whole.byteOffset + left.at + 8 * n));
    expect([...first]).toEqual(given.map(({ row }) => row.window_start_s));
    expect((decodeResults(recordBody(bytes), false).groups.windows.tables.windows as PackedRows).length).toBe(0);
  });

  it('are copied a window at a time, the record checked once through, and a damaged one refused', async () => {
    const record = Buffer.from(encodeRecord(facts, resultsWith({ windows: packed })));
    const pack = join(tempDir(), 'entries.pack');
    writeFileSync(pack, Buffer.concat([Buffer.alloc(100, 7), record]));
    const loc = { file: pack, offset: 100, length: record.length, bodySha: record.subarray(44, 76).toString('hex') };
    const copied: Buffer[] = [];
    const src = new RecordsInOrder(4096);
    await src.copy(loc, 'long.wav', async (b) => { copied.push(Buffer.from(b)); });
    expect(copied.length).toBeGreaterThan(5);
    expect(Buffer.concat(copied)).toEqual(record);
    const damaged = Buffer.from(record);
    damaged[damaged.length - 3] ^= 1;
    writeFileSync(pack, Buffer.concat([Buffer.alloc(100, 7), damaged]));
    await expect(src.copy(loc, 'long.wav', async () => {})).rejects.toThrow(/damaged/);
    await src.close();
  });

  it('become the same Parquet record batches as the row objects stored before them', async () => {
    // Rows as entries stored before held them: objects with recording, channel and unit, nulls for NaN (JSON).
    const objects = given.map(({ channel, row }) => ({ recording: 'long.wav', channel: channels[channel].name, unit: channels[channel].unit, ...JSON.parse(JSON.stringify(row)) }));
    const old = decodeResults(recordBody(encodeRecord(facts, resultsWith({ windows: objects }))));
    const now = decodeResults(recordBody(encodeRecord(facts, resultsWith({ windows: packed }))));
    const oldResult = assembleRecording(old as never, {}, { windows: { length_s: 0.25, hop_s: 0.25 } } as never);
    const nowResult = assembleRecording(now as never, {}, { windows: { length_s: 0.25, hop_s: 0.25 } } as never);
    // As objects, a packed row names every column of its table (null where the row had none).
    expect(nowResult.tables.windows).toEqual(oldResult.tables.windows.map((r) => ({ ...r, ...expected(r as Row, packed.names) })));
    const tableOf = async (r: typeof oldResult) => {
      const g = new RowsGather(WINDOW_TABLE);
      for (const s of r.secondary.windows) g.add(s);
      const rows: unknown[] = [];
      for (const part of g.done()) for await (const ipc of partStreams(part, WINDOW_TABLE, 64)) rows.push(...arrow.tableFromIPC(ipc).toArray().map((x) => x.toJSON()));
      return rows;
    };
    const oldRows = await tableOf(oldResult);
    expect(oldRows.length).toBe(n);
    expect(await tableOf(nowResult)).toEqual(oldRows);
  });
});
