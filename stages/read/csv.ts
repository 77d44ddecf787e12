// Delimited text reader: a header row of channel names, an optional time column, comma, semicolon or tab.
import { createReadStream } from 'node:fs';
import { open } from 'node:fs/promises';
import { createInterface } from 'node:readline';
import { refuseNotUtf8 } from './text-encoding.js';
import { boundedChunkFrames, checkChannelCount, DEFAULT_CHUNK_FRAMES, RecordingError, type Recording } from './recording.js';
import { DECLARE_IN_ARCHIVE } from './declare-how.js';
import { isoTimeMs } from './iso-time.js';
import { keepSteps, MAX_TIME_S, nominalOf, startOfTimes, stepCounter } from './time-steps.js';

const TIME_HEADER = /^(time|t|timestamp|date ?time|seconds|time[ _]?\(?\[?s\]?\)?|time_s)$/i;
const PROBE_BYTES = 1 << 20;
const PROBE_ROWS = 4096;

/** Splits one line on a delimiter, honouring RFC 4180 double quotes. */
export function splitFields(line: string, delimiter: string): string[] {
  if (!line.includes('"')) return line.split(delimiter);
  const out: string[] = [];
  let field = '', quoted = false;
  for (let i = 0; i < line.length; i++) {
    const c = line[i];
    if (quoted) {
      if (c === '"' && line[i + 1] === '"') { field += '"'; i++; }
      else if (c === '"') quoted = false;
      else field += c;
    } else if (c === '"') quoted = true;
    else if (c === delimiter) { out.push(field); field = ''; }
    else field += c;
  }
  out.push(field);
  return out;
}

/** The delimiter that splits the header into the most fields. */
export function detectDelimiter(header: string): string {
  let best = ',', most = 0;
  for (const d of [',', ';', '\t']) {
    const n = splitFields(header, d).length;
    if (n > most) { best = d; most = n; }
  }
  return best;
}

const isData = (line: string) => line.trim() !== '' && !line.startsWith('#');

/**
 * A time cell as seconds: plain numbers are seconds, ISO 8601 date-times seconds since the epoch (UTC unless they name a
 * zone, as every start time quern reads, so a run's periods do not depend on the machine's zone). Anything else is NaN:
 * Date.parse would take 05/11/2026 for 11 May and "night 3" for a day in 2001.
 */
function timeValue(text: string, decimalComma: boolean): number {
  const t = text.trim();
  const n = Number(decimalComma ? t.replace(',', '.') : t);
  if (t !== '' && Number.isFinite(n)) return n;
  return isoTimeMs(t) / 1000;
}

/** Decimals of a time cell's seconds: of a number, or of an ISO 8601 time's fraction of a second (before its zone). */
const decimals = (t: string) => { const m = t.trim().match(/[.,](\d+)(?:[eE]|$|[zZ+-])/); return m ? m[1].length : 0; };

export interface CsvOptions {
  chunkFrames?: number;
  declaredSampleRate?: number | null;
  /** Where the user gives the sample rate, named in messages (archive.yaml, or peek's option). */
  sampleRateWhere?: string;
}

export async function openCsv(path: string, { chunkFrames = DEFAULT_CHUNK_FRAMES, declaredSampleRate = null, sampleRateWhere = DECLARE_IN_ARCHIVE.where.sample_rate }: CsvOptions = {}): Promise<Recording> {
  // Probe the first megabyte for the header, the delimiter and the time step, without reading the whole file.
  const fh = await open(path, 'r');
  const probe = Buffer.alloc(PROBE_BYTES);
  const { bytesRead } = await fh.read(probe, 0, PROBE_BYTES, 0);
  await fh.close();
  refuseNotUtf8(probe.subarray(0, bytesRead));
  const text = probe.toString('utf8', 0, bytesRead).replace(/^\uFEFF/, '');
  const lines = text.split(/\r?\n/);
  if (bytesRead === PROBE_BYTES) lines.pop(); // the last line may be cut by the probe
  const headerIndex = lines.findIndex(isData);
  if (headerIndex < 0) throw new RecordingError('line 1: no header row found; the first non-comment line must name the columns');
  const headerLine = headerIndex + 1;
  const delimiter = detectDelimiter(lines[headerIndex]);
  const names = splitFields(lines[headerIndex], delimiter).map((s) => s.trim());
  const timeColumn = TIME_HEADER.test(names[0]) ? 0 : -1;
  const channelNames = names.filter((_, i) => i !== timeColumn);
  if (channelNames.length === 0) throw new RecordingError(`line ${headerLine}: the header names no data columns`);
  checkChannelCount(channelNames.length, `line ${headerLine}: header`);
  chunkFrames = boundedChunkFrames(chunkFrames, channelNames.length);
  const probeRows = lines.slice(headerIndex + 1).filter(isData).slice(0, PROBE_ROWS).map((l) => splitFields(l, delimiter));
  // A semicolon or tab file whose cells hold commas writes decimals with a comma.
  const decimalComma = delimiter !== ',' && probeRows.some((r) => r.some((c) => /^\s*-?\d+,\d+/.test(c)));

  let sampleRate = declaredSampleRate ?? NaN;
  let startTime: Date | null = null;
  let timeStep = NaN, timeTolerance = NaN;
  if (timeColumn === 0) {
    const times = probeRows.map((r) => timeValue(r[0] ?? '', decimalComma));
    if (times.length < 2 || !Number.isFinite(times[0]) || !Number.isFinite(times[times.length - 1])) {
      throw new RecordingError(`line ${headerLine + 1}: column "${names[0]}" looks like a time column but its first rows are neither numbers (seconds) nor ISO 8601 date-times (2026-11-16T02:00:00.25, UTC unless a zone is given); fix the file or rename the column`);
    }
    // Numbers this large are no seconds (since 1970 they would pass the year 5000): milliseconds since 1970, read as seconds,
    // would give a rate a thousand times too low.
    if (Math.abs(times[0]) >= MAX_TIME_S) throw new RecordingError(`line ${headerLine + 1}: column "${names[0]}" starts at ${(probeRows[0][0] ?? '').trim()}, too large for seconds; quern reads a time column in seconds (or as ISO 8601 date-times): if these are milliseconds or microseconds since 1970, export seconds or date-times, or drop the column and declare sample_rate`);
    // The printed times' resolution: steps within it of each other are the same step, rounded.
    const resolution = 10 ** -Math.max(...probeRows.slice(0, 32).map((r) => decimals(r[0] ?? '')));
    // The nominal step over the probe rows: a dropout among them does not pull it, and rounding of printed times averages out.
    timeStep = nominalOf(times, resolution);
    if (!(timeStep > 0)) throw new RecordingError(`line ${headerLine + 1}: the time column does not increase; sort the rows by time`);
    const derived = 1 / timeStep;
    timeTolerance = Math.max(0.01 * timeStep, resolution);
    // Date-times give the start; so do POSIX seconds, as loggers print them.
    startTime = /^-?[\d.,eE+]+$/.test((probeRows[0][0] ?? '').trim()) ? startOfTimes(times[0]) : new Date(times[0] * 1000);
    if (declaredSampleRate != null && Math.abs(derived - declaredSampleRate) > 0.005 * declaredSampleRate) {
      throw new RecordingError(`line ${headerLine + 1}: the time column steps at ${derived.toPrecision(6)} Hz but the declaration says ${declaredSampleRate} Hz; correct ${sampleRateWhere} or check the export`);
    }
    sampleRate = declaredSampleRate ?? Number(derived.toPrecision(6));
  } else if (declaredSampleRate == null) {
    throw new RecordingError(`line ${headerLine}: no time column (first column "${names[0]}") and no sample rate given; set ${sampleRateWhere} or export the time column`);
  }

  const notes: string[] = [];
  const width = names.length;
  async function* chunks(): AsyncGenerator<Float64Array[]> {
    const out = channelNames.map(() => new Float64Array(chunkFrames));
    const lineReader = createInterface({ input: createReadStream(path, { encoding: 'utf8' }), crlfDelay: Infinity });
    let lineNo = 0, row = 0, k = 0, shortRows = 0, firstShort = 0;
    const steps = stepCounter(timeStep, timeTolerance);
    try {
      for await (const raw of lineReader) {
        lineNo++;
        if (lineNo <= headerLine || !isData(raw)) continue;
        const cells = splitFields(raw.replace(/^\uFEFF/, ''), delimiter);
        if (cells.length !== width && shortRows++ === 0) firstShort = lineNo;
        if (timeColumn === 0) steps.add(timeValue(cells[0] ?? '', decimalComma));
        for (let c = 0, j = 0; c < width; c++) {
          if (c === timeColumn) continue;
          const cell = (cells[c] ?? '').trim();
          out[j++][k] = cell === '' ? NaN : Number(decimalComma ? cell.replace(',', '.') : cell);
        }
        row++;
        if (++k === chunkFrames) { yield out; k = 0; }
      }
      if (k > 0) yield out.map((a) => a.subarray(0, k));
    } finally {
      lineReader.close();
    }
    if (timeColumn === 0) keepSteps(recording, steps);
    if (shortRows > 0) notes.push(`${shortRows} rows have a different number of fields than the header (first at line ${firstShort}); missing cells count as missing samples`);
  }
  const recording: Recording = {
    format: 'csv', channelCount: channelNames.length, sampleRate, frames: null, encoding: decimalComma ? 'text (decimal comma)' : 'text',
    bits: null, normalised: false, startTime, channelNames, notes, chunks, close: async () => {},
  };
  return recording;
}
