// Spreadsheet exports: RFC 4180 CSV read back by a strict parser, XLSX read back by a second, independent reader (SheetJS),
// numbers equal to the Parquet values (read by DuckDB), and formula injection neutralised. LibreOffice's reading is in test/system/.
import { cpSync, existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { parse } from 'csv-parse/sync';
import ExcelJS from 'exceljs';
import { beforeAll, describe, expect, it } from 'vitest';
import * as XLSX from 'xlsx';
import { parquetMetadataAsync } from 'hyparquet';
import { neutralise } from '../pipeline/exports/csv.js';
import { withChannelUnit } from '../pipeline/exports/tables.js';
import { encodeWav } from '../scripts/wav-file.js';
import { quern, readJson, repo, sampleArchiveCopy, tempDir } from './helpers.js';

const INJECTION = '=HYPERLINK("http://example.invalid","x")';

async function parquetRows(path: string) {
  const db = await (await DuckDBInstance.create()).connect();
  return (await db.runAndReadAll(`select * from '${path}'`)).getRowObjectsJS() as Record<string, unknown>[];
}
const key = (r: Record<string, unknown>) => `${r.recording}|${r.channel}`;
/** The CSV/XLSX header cell for a column: "name" or "name [unit]". */
const base = (header: string) => header.replace(/ \[.*\]$/, '');

describe('exports of the sample archive', () => {
  let out = '';
  let parquet: Record<string, unknown>[] = [];
  beforeAll(async () => {
    const archive = sampleArchiveCopy();
    out = join(archive, '..', 'out');
    const r = quern('reduce', archive, '--out', out, '--quiet', '--export', 'csv,xlsx', '--wide');
    expect(r.stdout).toMatch(/export:\s+.*tables\.xlsx/);
    parquet = await parquetRows(join(out, 'features.parquet'));
  });

  it('writes RFC 4180 CSV (CRLF, quoted text, UTF-8) that a strict parser reads back to the Parquet values at full double precision', () => {
    const text = readFileSync(join(out, 'features.csv'), 'utf8');
    expect(text.includes('\r\n')).toBe(true);
    expect(text.replace(/\r\n/g, '').includes('\n')).toBe(false);
    const rows: string[][] = parse(text, { relax_quotes: false, relax_column_count: false, record_delimiter: '\r\n' });
    const header = rows[0].map(base);
    expect(rows[0]).toContain('rms [channel unit]');
    expect(rows[0]).toContain('velocity_10_1000_rms [mm/s]');
    expect(rows.length - 1).toBe(parquet.length);
    const byKey = new Map(parquet.map((r) => [key(r), r]));
    let compared = 0;
    for (const row of rows.slice(1)) {
      const obj = Object.fromEntries(header.map((h, i) => [h, row[i]]));
      const p = byKey.get(`${obj.recording}|${obj.channel}`)!;
      for (const [h, v] of Object.entries(obj)) {
        const pv = p[h];
        if (typeof pv === 'number') { expect(Number(v), h).toBe(pv); compared++; }
        if (pv === null) expect(v, h).toBe('');
      }
    }
    expect(compared).toBeGreaterThan(1000);
    // Column order is the table's own, and stable.
    expect(header.slice(0, 5)).toEqual(['recording', 'group', 'channel', 'quantity', 'unit']);
  });

  it('leaves no CSV of a table the latest export did not write: trends turned off and no --wide remove trends.csv and features-wide.csv', () => {
    const archive = sampleArchiveCopy(), here = join(archive, '..', 'out-stale');
    expect(quern('reduce', archive, '--out', here, '--quiet', '--export', 'csv', '--wide').code).toBe(1);
    for (const f of ['trends.csv', 'features-wide.csv', 'features.csv']) expect(existsSync(join(here, f)), f).toBe(true);
    const spec = join(archive, '..', 'no-trends.yaml');
    writeFileSync(spec, 'statistics: {}\n');
    expect(quern('reduce', archive, '--out', here, '--quiet', '--spec', spec, '--export', 'csv').code).toBe(1);
    expect(existsSync(join(here, 'trends.parquet'))).toBe(false);
    for (const f of ['trends.csv', 'features-wide.csv', 'spectra.csv']) expect(existsSync(join(here, f)), f).toBe(false);
    expect(existsSync(join(here, 'features.csv'))).toBe(true);
  });

  it('names every CSV column\'s unit in one pair of brackets, the trends\' values in their feature\'s unit', () => {
    for (const table of ['features', 'windows', 'spectra', 'trends']) {
      const [header] = parse(readFileSync(join(out, `${table}.csv`), 'utf8'), { record_delimiter: '\r\n', to_line: 1 }) as string[][];
      for (const cell of header) expect(cell, `${table}.csv`).not.toMatch(/\[\[|\]\]/);
      if (table === 'trends') expect(header).toEqual(expect.arrayContaining(['unit', 'value [feature unit]', 'baseline [feature unit]']));
    }
  });

  it('writes a wide layout: one row per recording, channel-prefixed columns with the channel unit resolved', () => {
    const rows: string[][] = parse(readFileSync(join(out, 'features-wide.csv'), 'utf8'), { record_delimiter: '\r\n' });
    expect(rows.length - 1).toBe(new Set(parquet.map((r) => r.recording)).size);
    expect(rows[0]).toContain('acc_de.rms [m/s^2]');
    expect(rows[0]).toContain('pressure.mean [bar]');
    const h = rows[0];
    const night = rows.find((r) => r[0] === 'nightly/2026-11-16/pump-endurance.wav')!;
    const p = parquet.find((r) => r.recording === 'nightly/2026-11-16/pump-endurance.wav' && r.channel === 'mic')!;
    expect(Number(night[h.indexOf('mic.rms [Pa]')])).toBe(p.rms);
  });

  it('writes a squared unit of more than one symbol in parentheses, (m/s^2)^2, not m/s^2^2 (which reads as m/s⁴), in the wide headers', () => {
    const [h, ...rows] = parse(readFileSync(join(out, 'features-wide.csv'), 'utf8'), { record_delimiter: '\r\n' }) as string[][];
    expect(h).toContain('acc_de.band_20_200_ms [(m/s^2)^2]');
    expect(h).toContain('mic.band_20_200_ms [Pa^2]');
    expect(h).toContain('strain_a.band_20_200_ms [(µm/m)^2]');
    for (const cell of h) expect(cell).not.toMatch(/\^\d+\^/);
    // The unit states what the figure is: a band's mean square is its RMS squared (common practice).
    const row = rows.find((r) => r[0] === 'nightly/2026-11-16/pump-endurance.wav')!;
    const ms = Number(row[h.indexOf('acc_de.band_20_200_ms [(m/s^2)^2]')]), rms = Number(row[h.indexOf('acc_de.band_20_200_rms [m/s^2]')]);
    expect(ms).toBeCloseTo(rms ** 2, 10);
    // Every form of the placeholder, as the tables name it (the spectra's density in [unit]²/Hz).
    expect(withChannelUnit('[unit]^2', 'm/s^2')).toBe('(m/s^2)^2');
    expect(withChannelUnit('[unit]²/Hz', 'm/s^2')).toBe('(m/s^2)²/Hz');
    expect(withChannelUnit('[unit]^2', 'V')).toBe('V^2');
    expect(withChannelUnit('[unit]', 'm/s^2')).toBe('m/s^2');
  });

  it('says in the workbook\'s run sheet that the tables cover the whole archive when the run had no period', () => {
    const run = XLSX.utils.sheet_to_json<string[]>(XLSX.read(readFileSync(join(out, 'tables.xlsx'))).Sheets.run, { header: 1 });
    const scanned = readJson(join(out, 'run.json')).counts.scanned;
    expect(run.find((r) => r[0] === 'period')?.[1]).toBe(`none: the tables cover every recording of the archive (${scanned} recordings in the archive)`);
  });

  it('writes an XLSX workbook that SheetJS reads back to the same numbers, with sheets for every table and the run', async () => {
    const wb = XLSX.read(readFileSync(join(out, 'tables.xlsx')));
    expect(wb.SheetNames).toEqual(['features', 'features wide', 'windows', 'cycles', 'trends', 'quality flags', 'run']);
    const rows = XLSX.utils.sheet_to_json<unknown[]>(wb.Sheets.features, { header: 1, raw: true });
    const header = (rows[0] as string[]).map(base);
    const byKey = new Map(parquet.map((r) => [key(r), r]));
    let compared = 0;
    for (const row of rows.slice(1)) {
      const obj = Object.fromEntries(header.map((h, i) => [h, row[i]]));
      const p = byKey.get(`${obj.recording}|${obj.channel}`)!;
      for (const h of header) if (typeof p[h] === 'number') { expect(obj[h], h).toBe(p[h]); compared++; }
    }
    expect(compared).toBeGreaterThan(1000);
    expect(wb.Sheets.features['!autofilter']).toBeDefined();
    const run = XLSX.utils.sheet_to_json<string[]>(wb.Sheets.run, { header: 1 });
    expect(run.map((r) => r[0])).toEqual(expect.arrayContaining(['tool', 'run id', 'archive', 'spec', 'spec hash (SHA-256)']));
    // Layout, read with exceljs: frozen header row, severities filled with colour.
    const xl = new ExcelJS.Workbook();
    await xl.xlsx.readFile(join(out, 'tables.xlsx'));
    const ws = xl.getWorksheet('features')!;
    expect(ws.views[0]).toMatchObject({ state: 'frozen', ySplit: 1 });
    const qcol = (ws.getRow(1).values as string[]).indexOf('quality');
    const failRow = ws.getRows(2, ws.rowCount - 1)!.find((r) => r.getCell(qcol).value === 'fail')!;
    expect((failRow.getCell(qcol).fill as ExcelJS.FillPattern).fgColor?.argb).toBe('FFF1D3CD');
  });

  it('rounds to the number of significant digits asked for, and writes semicolons with decimal commas and a byte-order mark on request', async () => {
    quern('export', out, '--to', 'csv', '--digits', '6', '--decimal-comma', '--bom');
    const text = readFileSync(join(out, 'features.csv'), 'utf8');
    expect(text.charCodeAt(0)).toBe(0xfeff);
    const rows: string[][] = parse(text, { delimiter: ';', bom: true, record_delimiter: '\r\n' });
    const header = rows[0].map(base);
    const i = header.indexOf('rms');
    for (const row of rows.slice(1)) {
      const p = parquet.find((r) => r.recording === row[0] && r.channel === row[2])!;
      expect(Number(row[i].replace(',', '.'))).toBe(Number((p.rms as number).toPrecision(6)));
    }
  });
});

describe('the workbook of a --since run says it holds a slice of the archive', () => {
  it('names the period, how many recordings start in it of how many the archive holds, and what run.json says of late arrivals and quiet groups', () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    expect(quern('reduce', archive, '--out', out, '--quiet', '--since', '2026-11-20', '--until', '2026-11-21T12:00Z', '--export', 'xlsx').code).toBe(0);
    const record = readJson(join(out, 'run.json'));
    const rows = XLSX.utils.sheet_to_json<string[]>(XLSX.read(readFileSync(join(out, 'tables.xlsx'))).Sheets.run, { header: 1 });
    const fact = (name: string) => rows.find((r) => r[0] === name)?.[1];
    // The period's bounds as run.json keeps them (ms since the epoch), written back in ISO 8601 UTC.
    expect(record.period.since).toBe(Date.parse('2026-11-20T00:00:00Z'));
    expect(record.period.selected).toBeGreaterThan(0);
    expect(record.period.selected).toBeLessThan(record.counts.scanned);
    expect(fact('period')).toBe(`from 2026-11-20T00:00:00Z until 2026-11-21T12:00:00Z, a start at the end left out (UTC; --since, --until): the tables hold only the ${record.period.selected} recordings starting in it, a slice of ${record.counts.scanned} recordings in the archive, not the whole archive`);
    // As many rows of features as the period's recordings have channels: the sheet and the fact agree.
    const features = XLSX.utils.sheet_to_json<Record<string, unknown>>(XLSX.read(readFileSync(join(out, 'tables.xlsx'))).Sheets.features);
    expect(new Set(features.map((r) => r.recording)).size).toBe(record.period.selected);
    expect(fact('late arrivals')).toEqual(record.period.late_arrivals.count === 0 ? 'none' : expect.any(String));
    const quiet = record.period.quiet_groups.map((q: { group: string }) => q.group);
    expect(fact('quiet groups')).toEqual(quiet.length ? expect.stringContaining(quiet.join(', ')) : 'none');
  });
});

/** A CSV's rows as objects keyed by header name (units cut off). */
function csvObjects(path: string): Record<string, string>[] {
  const [head, ...rows] = parse(readFileSync(path, 'utf8'), { record_delimiter: '\r\n' }) as string[][];
  return rows.map((r) => Object.fromEntries(head.map((h, i) => [base(h), r[i]])));
}

describe('--digits rounds figures, never keys, axes, settings or counts', () => {
  let out = '';
  const parquet: Record<string, Record<string, unknown>[]> = {};
  beforeAll(async () => {
    const archive = sampleArchiveCopy();
    const first = join(archive, '..', 'out');
    expect(quern('reduce', archive, '--out', first, '--quiet').code).toBe(1); // one sample recording fails
    // The reduced folder copied, so this export at 3 digits leaves no other test's files changed.
    out = join(archive, '..', 'out-3');
    cpSync(first, out, { recursive: true });
    expect(quern('export', out, '--to', 'csv,xlsx', '--digits', '3').code).toBe(0);
    for (const t of ['features', 'windows', 'spectra', 'cycles']) parquet[t] = await parquetRows(join(out, `${t}.parquet`));
  });

  it('CSV: sample_rate, duration_s, counts, window starts and lengths, spectrum frequencies exact (DuckDB\'s reading of the Parquet); figures to 3 significant digits', () => {
    const features = csvObjects(join(out, 'features.csv'));
    const byKey = new Map(parquet.features.map((r) => [key(r), r]));
    for (const row of features) {
      const p = byKey.get(key(row))!;
      for (const c of ['sample_rate', 'duration_s', 'n_nonfinite', 'spike_count']) expect(Number(row[c]), c).toBe(p[c]);
      // Number.prototype.toPrecision (ECMA-262) is the rounding --digits promises.
      expect(Number(row.rms), 'rms').toBe(Number((p.rms as number).toPrecision(3)));
    }
    // The spectra's bins stay distinct: rounded to 3 digits, 1001.95 and 1003.9 Hz would both read 1000.
    const spectra = csvObjects(join(out, 'spectra.csv'));
    expect(spectra.length).toBe(parquet.spectra.length);
    spectra.forEach((row, i) => expect(Number(row.frequency_hz)).toBe(parquet.spectra[i].frequency_hz));
    expect(new Set(spectra.map((r) => `${r.recording}|${r.channel}|${r.frequency_hz}`)).size).toBe(spectra.length);
    // The check can fail: some of these frequencies change at 3 digits, and some densities do (figures are rounded).
    expect(parquet.spectra.some((r) => Number((r.frequency_hz as number).toPrecision(3)) !== r.frequency_hz)).toBe(true);
    spectra.forEach((row, i) => expect(Number(row.density)).toBe(Number((parquet.spectra[i].density as number).toPrecision(3))));
    const windows = csvObjects(join(out, 'windows.csv'));
    windows.forEach((row, i) => {
      expect(Number(row.window_start_s)).toBe(parquet.windows[i].window_start_s);
      expect(Number(row.window_s)).toBe(parquet.windows[i].window_s);
    });
    // A cycle's range and mean name its row (a bin's centre, or one distinct range and mean).
    csvObjects(join(out, 'cycles.csv')).forEach((row, i) => { for (const c of ['range', 'mean', 'count']) expect(Number(row[c]), c).toBe(parquet.cycles[i][c]); });
  });

  it('XLSX (read by SheetJS): the same columns exact, the figures rounded', () => {
    const wb = XLSX.read(readFileSync(join(out, 'tables.xlsx')));
    const objects = (sheet: string) => {
      const [head, ...rows] = XLSX.utils.sheet_to_json<unknown[]>(wb.Sheets[sheet], { header: 1, raw: true });
      return rows.map((r) => Object.fromEntries((head as string[]).map((h, i) => [base(h), r[i]])));
    };
    const byKey = new Map(parquet.features.map((r) => [key(r), r]));
    for (const row of objects('features')) {
      const p = byKey.get(key(row))!;
      expect(row.sample_rate).toBe(p.sample_rate);
      expect(row.duration_s).toBe(p.duration_s);
      expect(row.rms).toBe(Number((p.rms as number).toPrecision(3)));
    }
    objects('windows').forEach((row, i) => expect(row.window_start_s).toBe(parquet.windows[i].window_start_s));
  });
});

describe('schemas/features.table.json describes the tables as written', () => {
  const schema = readJson(join(repo, 'schemas', 'features.table.json'));
  let out = '';
  beforeAll(() => {
    const archive = sampleArchiveCopy();
    out = join(archive, '..', 'out');
    expect(quern('reduce', archive, '--out', out, '--quiet').code).toBe(1);
  });

  /** A Parquet file's columns as its footer gives them (hyparquet): name, whether it may hold nulls, and its unit (quern.units). */
  async function written(file: string) {
    const bytes = readFileSync(join(out, file));
    const meta = await parquetMetadataAsync(bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength));
    const units = JSON.parse(meta.key_value_metadata!.find((k) => k.key === 'quern.units')!.value!);
    return meta.schema.slice(1).map((e) => ({ name: e.name, nullable: e.repetition_type === 'OPTIONAL', unit: units[e.name] as string }));
  }
  /** A schema entry's names as a pattern: "band_<low>_<high>_ms" and lists such as "env_mean, env_rms" match the written names. */
  const pattern = (name: string) => new RegExp(`^(${name.split(', ').map((n) => n.replace(/[.^$()]/g, '\\$&').replace(/<[^>]+>/g, '.+')).join('|')})$`);

  it('names every column of windows, cycles, spectra and trends in order, with its unit and whether it may be null', async () => {
    for (const table of ['windows', 'cycles', 'spectra', 'trends']) {
      const described = schema.tables[`${table}.parquet`].columns;
      const columns = await written(`${table}.parquet`);
      expect(columns.map((c) => c.name), table).toEqual(described.map((c: any) => c.name));
      columns.forEach((c, i) => {
        expect(c.unit, `${table}.${c.name}`).toBe(described[i].unit);
        expect(c.nullable, `${table}.${c.name}`).toBe(/nullable/.test(described[i].type));
      });
    }
  });

  it('names every column of features.parquet (patterns for the spec\'s bands, labels and constants) with its unit', async () => {
    const columns = await written('features.parquet');
    for (const c of columns) {
      const d = schema.columns.find((s: any) => !s.name.startsWith('<label>') && pattern(s.name).test(c.name));
      if (!d) { expect(['rig', 'test_id'], `${c.name} is described`).toContain(c.name); continue; }
      expect(c.unit, c.name).toBe(d.unit);
      // Every figure column is written nullable; which may really be null is held by a channel with no finite samples (test/no-finite-samples.test.ts).
      if (!c.nullable) expect(d.type, c.name).not.toMatch(/nullable/);
    }
  });
});

describe('formula injection (OWASP, "CSV Injection")', () => {
  let out = '';
  beforeAll(() => {
    const archive = join(tempDir(), 'archive');
    mkdirSync(archive);
    writeFileSync(join(archive, 'archive.yaml'), `groups:\n  - name: g\n    match: "*.wav"\n    labels: { rig: "@SUM(1+1)" }\n    channels:\n      - { name: '${INJECTION}', quantity: voltage, unit: "-V" }\n`);
    writeFileSync(join(archive, '+cmd.wav'), encodeWav({ sampleRate: 1000, channels: [Float64Array.from({ length: 2000 }, (_, i) => 0.3 * Math.sin(i / 7))] }));
    out = join(archive, '..', 'out');
    quern('reduce', archive, '--out', out, '--quiet', '--export', 'csv,xlsx');
  });

  it('CSV: a channel, a file and a label that a spreadsheet would run as formulas arrive as inert text', () => {
    const rows: string[][] = parse(readFileSync(join(out, 'features.csv'), 'utf8'), { record_delimiter: '\r\n' });
    const h = rows[0].map(base);
    const row = rows[1];
    expect(row[h.indexOf('channel')]).toBe(`'${INJECTION}`);
    expect(row[h.indexOf('recording')]).toBe("'+cmd.wav");
    expect(row[h.indexOf('rig')]).toBe("'@SUM(1+1)");
    expect(row[h.indexOf('unit')]).toBe("'-V");
    // Numbers are not text: a negative mean stays a number.
    expect(Number.isFinite(Number(row[h.indexOf('min')]))).toBe(true);
    expect(row[h.indexOf('min')].startsWith('-')).toBe(true);
  });

  it('a label that is a plain signed number keeps its sign without the apostrophe; anything a spreadsheet could compute does not', () => {
    for (const plain of ['-12.5', '+3', '-0.5e-3', '-.25', '1e6']) expect(neutralise(plain)).toBe(plain);
    for (const formula of ['-2+3', '+A1', '-SUM(1)', '-12.5%', '- 1', '=-1']) expect(neutralise(formula)).toBe(`'${formula}`);
  });

  it('XLSX: the same cells are strings, not formulas, for SheetJS', () => {
    const wb = XLSX.read(readFileSync(join(out, 'tables.xlsx')));
    const ws = wb.Sheets.features;
    const cells = Object.entries(ws).filter(([k]) => !k.startsWith('!')).map(([, c]) => c as XLSX.CellObject);
    expect(cells.some((c) => c.f)).toBe(false);
    expect(cells.find((c) => String(c.v).includes('HYPERLINK'))).toMatchObject({ t: 's', v: `'${INJECTION}` });
  });
});
