// Delimited text reader: a header row of channel names, an optional time column, comma, semicolon or tab.
import { createReadStream } from 'node:fs';
import { open } from 'node:fs/promises';
import { createInterface } from 'node:readline';
import { refuseNotUtf8 } from './text-encoding.js';
import { boundedChunkFrames, checkChannelCount, DEFAULT_CHUNK_FRAMES, RecordingError, withStart, type Recording } from './recording.js';
import { DECLARE_IN_ARCHIVE } from './declare-how.js';
import { isoTimeMs, startAt } from './iso-time.js';
import { unendedLineNote } from './unended-line.js';
import { firstNul, paddingNote, trailingNuls } from './nul-padding.js';
import { keepSteps, MAX_TIME_S, offGrid, printedRate, startOfTimes, stepCounter } from './time-steps.js';
import { printedUnits } from './printed-time.js';
import { lostRowCounter, lostRowsNote, missingSamples, MOST_LOST_ROWS } from './lost-rows.js';
import { gridDrift, gridWatch } from './grid-watch.js';

/** A time column's header without a unit: its numbers are read as seconds. */
const TIME_HEADER = /^(time|t|timestamp|date ?time)$/i;
/** Divisors from a unit a time column's header names to seconds. */
const PER_SECOND: Record<string, number> = { s: 1, sec: 1, secs: 1, ms: 1e3, us: 1e6, 'µs': 1e6, 'μs': 1e6, ns: 1e9 };
// A unit after time, timestamp or t (time_ms, time [ms], time (ms), timestamp_us, t_ms, t[ms], tms) or alone (ms, µs; not a bare s, us or ns, likely channels' names: NS is a north–south axis).
const TIME_UNIT_HEADER = /^(?:(?:timestamp|time|t)[ _]?(?:\(\s*(s|secs?|ms|us|µs|μs|ns)\s*\)|\[\s*(s|secs?|ms|us|µs|μs|ns)\s*\]|(s|secs?|ms|us|µs|μs|ns))|(ms|µs|μs|seconds))$/i;
/** The units a time column is read in, as a header names them. */
export const TIME_UNITS_READ = 's (sec), ms, us (µs) or ns';
// Time, timestamp or t with a unit of time quern does not read (time [min], time_h, t (h), timestamp_days); time or timestamp with any bracketed unit.
const UNREAD_TIME_UNIT = /^(?:(?:timestamp|time|t)[ _]?(?:\(\s*(min|mins|minutes?|h|hrs?|hours?|d|days?)\s*\)|\[\s*(min|mins|minutes?|h|hrs?|hours?|d|days?)\s*\]|_(min|mins|minutes?|h|hrs?|hours?|d|days?))|(?:timestamp|time) ?(?:\(\s*([^)]*[^)\s][^)]*?)\s*\)|\[\s*([^\]]*[^\]\s][^\]]*?)\s*\]))$/i;

/** The unit a first column's header gives time in that quern does not read (min in "time [min]"); null for any other header. */
export function unreadTimeUnitOf(header: string): string | null {
  if (timeColumnOf(header)) return null;
  const m = header.match(UNREAD_TIME_UNIT);
  return m ? m[1] ?? m[2] ?? m[3] ?? m[4] ?? m[5] : null;
}

/**
 * Whether a header names a time column, and in what unit: `perSecond` divides its numbers into seconds, and `stated` says
 * whether the header named the unit (a bare `time` is read as seconds on trust). Null for a channel's name.
 */
export function timeColumnOf(header: string): { perSecond: number; stated: boolean } | null {
  if (TIME_HEADER.test(header)) return { perSecond: 1, stated: false };
  const m = header.match(TIME_UNIT_HEADER);
  if (!m) return null;
  const unit = (m[1] ?? m[2] ?? m[3] ?? m[4]).toLowerCase();
  return { perSecond: unit === 'seconds' ? 1 : PER_SECOND[unit], stated: true };
}
const PROBE_BYTES = 1 << 20;
const PROBE_ROWS = 4096;
/**
 * Rows of the probe whose times give the rate, at most: a clock a small fraction of a printed unit off it (999.9 Hz to the
 * millisecond) shows as one more unit every so many rows (10,000), which only a head longer than that tells from rows lost.
 */
const TIME_HEAD_ROWS = 1 << 16;

/** A line's first field: the time cell, without splitting the rest. */
const firstField = (line: string, delimiter: string) => {
  if (line.includes('"')) return splitFields(line, delimiter)[0];
  const at = line.indexOf(delimiter);
  return at < 0 ? line : line.slice(0, at);
};

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

/** A sample cell as a number: empty, or NaN as numpy and pandas write it, is a missing sample; other text is NaN too, but counted. */
const sampleValue = (cell: string, decimalComma: boolean) => (cell === '' ? NaN : Number(decimalComma ? cell.replace(',', '.') : cell));
const isMissingMark = (cell: string) => cell === '' || /^nan$/i.test(cell);

/**
 * A time cell as seconds: plain numbers are seconds, ISO 8601 date-times seconds since the epoch (UTC unless they name a
 * zone, as every start time quern reads, so a run's periods do not depend on the machine's zone). Anything else is NaN:
 * Date.parse would take 05/11/2026 for 11 May and "night 3" for a day in 2001.
 */
function timeValue(text: string, decimalComma: boolean, perSecond = 1): number {
  const t = text.trim();
  const n = Number(decimalComma ? t.replace(',', '.') : t);
  if (t !== '' && Number.isFinite(n)) return perSecond === 1 ? n : n / perSecond;
  return isoTimeMs(t) / 1000;
}

/** Decimals of a time cell's seconds: of a number, or of an ISO 8601 time's fraction of a second (before its zone). */
const decimals = (t: string) => { const m = t.trim().match(/[.,](\d+)(?:[eE]|$|[zZ+-])/); return m ? m[1].length : 0; };

/** Refuses a header naming one column twice, or none: its channels could not be told apart, nor named in the tables. */
function refuseRepeatedNames(names: string[], headerLine: number): void {
  const seen = new Map<string, number>();
  names.forEach((name, i) => {
    // pandas' to_csv writes the row index first under an empty name unless given index=False (common practice).
    if (name === '') throw new RecordingError(`line ${headerLine}: column ${i + 1} has no name in the header${i === 0 ? '; an unnamed first column is usually the row index a spreadsheet or dataframe wrote (pandas: to_csv(..., index=False) leaves it out)' : ''}; write the file without that column, or name it in the header`);
    const before = seen.get(name);
    if (before !== undefined) throw new RecordingError(`line ${headerLine}: the header names "${name}" twice (columns ${before + 1} and ${i + 1}); give each column its own name`);
    seen.set(name, i);
  });
}

/**
 * A declared rate a thousand, a million or a billion times the time column's (within 0.5 %): the column holds milliseconds,
 * microseconds or nanoseconds read as seconds; the hint names the header that says so.
 */
export function unitHint(ratio: number, column: string): string {
  const unit = ([[1e3, 'ms'], [1e6, 'us'], [1e9, 'ns']] as const).find(([k]) => Math.abs(ratio / k - 1) <= 0.005)?.[1];
  return unit ? `: the declared rate is ${unit === 'ms' ? 'a thousand' : unit === 'us' ? 'a million' : 'a billion'} times the column's, so "${column}" may hold ${unit === 'ms' ? 'milliseconds' : unit === 'us' ? 'microseconds' : 'nanoseconds'}: name it time_${unit} in the header to read it so` : '';
}

/**
 * The first rows' printed units `units`, followed by those of the lines after line `after` up to line `last` (`lineAt`
 * gives a line by its number), to TIME_HEAD_ROWS rows: each time's (t − first) / unit, rounded, exact while a time lies
 * under 2^50 units (its parse's rounding a quarter of a unit at most, IEEE 754). The head ends at a time that is no number
 * or is larger (the reading names it, or its step, as it comes); lines that are no data are passed over.
 */
function longerHead(units: Float64Array, lineAt: (no: number) => string, after: number, last: number, timeOf: (line: string) => number, first: number, unit: number): Float64Array {
  const out = new Float64Array(TIME_HEAD_ROWS);
  out.set(units);
  let n = units.length;
  for (let no = after + 1; no <= last && n < TIME_HEAD_ROWS; no++) {
    const line = lineAt(no);
    if (!isData(line)) continue;
    const t = timeOf(line);
    if (!(Math.abs(t) / unit < 2 ** 50)) break;
    out[n++] = Math.round((t - first) / unit);
  }
  return out.subarray(0, n);
}

/** A NUL byte within a file's text, at byte `at` on line `line`: damage, not padding, which only ends a file. */
const nulInText = (at: number, line: number) =>
  new RecordingError(`byte ${at} (line ${line}): a NUL byte within the text, which a text file never holds: the file is damaged (NUL bytes only at its end are padding, and left out); copy it again from the logger`);

/** The line a byte lies on, counting LF, CRLF or CR line ends before it. */
const lineAt = (bytes: Uint8Array, at: number) => {
  let line = 1;
  for (let i = 0; i < at; i++) if (bytes[i] === 0x0a || (bytes[i] === 0x0d && bytes[i + 1] !== 0x0a)) line++;
  return line;
};

/** Marks the end of a file's lines. */
const END = Symbol('end');

/** The lines, then END: the last line is known as such only once the lines have ended. */
async function* withEnd(lines: AsyncIterable<string>): AsyncGenerator<string | typeof END> {
  for await (const line of lines) yield line;
  yield END;
}

/** The offset of the first NUL byte in a file's text (its first `end` bytes). */
async function nulOffset(path: string, end: number): Promise<number> {
  const fh = await open(path, 'r');
  try { return await firstNul(fh, end); } finally { await fh.close(); }
}

/** A time cell that is neither seconds nor an ISO 8601 date-time: its samples cannot be placed, so the file is refused. */
const unreadableTime = (line: number, cell: string) =>
  new RecordingError(`line ${line}: the time "${cell.trim()}" is neither a number (seconds) nor an ISO 8601 date-time; correct that line or remove it`);

/** The note on a coarse time column whose rows left the declared rate's grid as they were read. */
export const offGridNote = (departures: number, widest: number, line: number, text: string, rate: number, printed: number) =>
  `rows lost: the time column leaves the grid of the declared ${rate} Hz ${departures === 1 ? 'once' : `${departures} times`}, first at line ${line} (${text}), by up to ${widest.toFixed(2)} printed units (${printed} decimals) beyond half a unit either way: rows were lost there, or the clock is not at ${rate} Hz; their count cannot be read from times that rows share, so the rows are read as evenly spaced and each departure counts as an irregular time step; export the times with more decimals to have lost rows placed`;

export interface CsvOptions {
  chunkFrames?: number;
  declaredSampleRate?: number | null;
  /** Where the user gives the sample rate, named in messages (archive.yaml, or peek's option). */
  sampleRateWhere?: string;
  /** The most rows lost in one gap of the time column that are read as missing samples; a longer gap fails the recording. */
  mostLostRows?: number;
}

export async function openCsv(path: string, { chunkFrames = DEFAULT_CHUNK_FRAMES, declaredSampleRate = null, sampleRateWhere = DECLARE_IN_ARCHIVE.where.sample_rate, mostLostRows = MOST_LOST_ROWS }: CsvOptions = {}): Promise<Recording> {
  // Probe the first megabyte for the header, the delimiter and the time step, without reading the whole file.
  const fh = await open(path, 'r');
  const probe = Buffer.alloc(PROBE_BYTES);
  const { bytesRead } = await fh.read(probe, 0, PROBE_BYTES, 0);
  // Trailing NUL bytes are a pre-allocated file's padding: the text ends before them.
  const size = (await fh.stat()).size;
  const padding = await trailingNuls(fh, size), end = size - padding, inProbe = Math.min(bytesRead, end);
  if (size > 0 && end === 0) { await fh.close(); throw new RecordingError(`byte 0: the file holds ${size} NUL bytes and no text: a logger sized it and wrote nothing; check the logger, then recapture or remove the file`); }
  // A NUL within the text is damage (UTF-8 text holds none); one in the first line is UTF-16 or UTF-32 text, named as such.
  const firstEnd = probe.subarray(0, inProbe).indexOf(0x0a), nul = probe.subarray(0, inProbe).indexOf(0);
  if (nul >= 0 && firstEnd >= 0 && nul > firstEnd) { await fh.close(); throw nulInText(nul, lineAt(probe, nul)); }
  // Whether the text ends without a line end: its last line may have been cut short.
  const lastByte = end === 0 ? null : end <= bytesRead ? probe[end - 1] : (await fh.read(Buffer.alloc(1), 0, 1, end - 1)).buffer[0];
  await fh.close();
  const unended = lastByte != null && lastByte !== 0x0a && lastByte !== 0x0d;
  refuseNotUtf8(probe.subarray(0, inProbe));
  const text = probe.toString('utf8', 0, inProbe).replace(/^\uFEFF/, '');
  // Lines end in LF, CRLF or CR alone (as readline splits them below).
  const lines = text.split(/\r\n|\r|\n/);
  const whole = inProbe === end; // the probe holds the whole text
  if (!whole) lines.pop(); // the last line may be cut by the probe
  const headerIndex = lines.findIndex(isData);
  if (headerIndex < 0) throw new RecordingError('line 1: no header row found; the first non-comment line must name the columns');
  const headerLine = headerIndex + 1;
  const delimiter = detectDelimiter(lines[headerIndex]);
  const names = splitFields(lines[headerIndex], delimiter).map((s) => s.trim());
  const probeLines = lines.map((l, i) => ({ l, no: i + 1 })).slice(headerIndex + 1).filter(({ l }) => isData(l)).slice(0, PROBE_ROWS);
  const probeRows = probeLines.map(({ l }) => splitFields(l, delimiter));
  if (whole && probeRows.length === 0) throw new RecordingError(`line ${headerLine}: the file holds no samples: its header and no rows after it (the capture stopped before its first row); check the logger, then recapture or remove the file`);
  // A delimiter ending every line (time,a,b,) leaves an unnamed last column of empty cells: no channel.
  const fields = names.length;
  while (names.length > 1 && names[names.length - 1] === '' && probeRows.every((r) => (r[names.length - 1] ?? '').trim() === '')) names.pop();
  refuseRepeatedNames(names, headerLine);
  const timeOf = timeColumnOf(names[0]);
  // A time column in another unit would be reduced as a channel (a ramp with figures): refused, with what quern reads.
  const unread = timeOf ? null : unreadTimeUnitOf(names[0]);
  if (unread != null) {
    throw new RecordingError(`line ${headerLine}: column "${names[0]}" is a time column in ${unread}, a unit quern does not read; quern reads time in ${TIME_UNITS_READ} named in the header (time [s], time_ms, timestamp_us) or as ISO 8601 date-times: export the times in one of those (seconds: time [s]), or remove the column and set ${sampleRateWhere}`);
  }
  const timeColumn = timeOf ? 0 : -1, perSecond = timeOf?.perSecond ?? 1;
  /** The note on an unended last line that shows a cut, which is then left out; null for one read as whole (RFC 4180, 2.2). */
  const cutNote = (text: string, line: number, cells: string[], before: string[] | null, comma: boolean) => unendedLineNote({
    line, text, cells, before,
    time: timeColumn === 0 ? timeValue(cells[0] ?? '', comma, perSecond) : NaN,
    timeBefore: timeColumn === 0 && before ? timeValue(before[0] ?? '', comma, perSecond) : NaN,
  }, names, timeColumn);
  const channelNames = names.filter((_, i) => i !== timeColumn);
  if (channelNames.length === 0) throw new RecordingError(`line ${headerLine}: the header names no data columns`);
  checkChannelCount(channelNames.length, `line ${headerLine}: header`);
  chunkFrames = boundedChunkFrames(chunkFrames, channelNames.length);
  // A semicolon or tab file whose cells hold commas writes decimals with a comma.
  const decimalComma = delimiter !== ',' && probeRows.some((r) => r.some((c) => /^\s*-?\d+,\d+/.test(c)));
  // The probe's rows leave out a last line the reading leaves out (the note is the reading's).
  if (whole && unended && probeLines.length > 0 && probeLines.length < PROBE_ROWS && probeLines[probeLines.length - 1].no === lines.length) {
    const n = probeRows.length;
    if (cutNote(probeLines[n - 1].l, probeLines[n - 1].no, probeRows[n - 1], n > 1 ? probeRows[n - 2] : null, decimalComma) != null) { probeRows.pop(); probeLines.pop(); }
    if (probeRows.length === 0) throw new RecordingError(`line ${probeLines.length + headerLine + 1}: the file holds no samples: its one row after the header has no line end and shows a cut (a copy or capture stopped part-way); copy the file again once the logger has written it, or end its line if it is whole`);
  }

  let sampleRate = declaredSampleRate ?? NaN;
  let startTime: Date | null = null;
  let timeStep = NaN, timeTolerance = NaN, lostStep = NaN, stepUncertainty = 0, timeHalf = 0, coarse = false, secondsAssumed: string | undefined;
  // A coarse time column's grid, followed row by row: its first time, printed unit (s), step in units and drift from the first rows.
  let gridFrom = NaN, gridUnit = NaN, gridStep = NaN, gridSlope = 0, printedDecimals = 0;
  const notes: string[] = [];
  if (timeColumn === 0) {
    const times = probeRows.map((r) => timeValue(r[0] ?? '', decimalComma, perSecond));
    if (times.length === 1 && Number.isFinite(times[0])) throw new RecordingError(`line ${probeLines[0].no}: the file holds one row, and no sample rate follows from one time; declare ${sampleRateWhere} and remove the time column, or export more rows`);
    if (times.length < 2 || !Number.isFinite(times[0])) {
      throw new RecordingError(`line ${headerLine + 1}: column "${names[0]}" looks like a time column but its first rows are neither numbers (seconds) nor ISO 8601 date-times (2026-11-16T02:00:00.25, UTC unless a zone is given); fix the file or rename the column`);
    }
    // Numbers this large are no seconds (since 1970 they would pass the year 5000): milliseconds since 1970, read as seconds,
    // would give a rate a thousand times too low.
    if (Math.abs(times[0]) >= MAX_TIME_S) throw new RecordingError(`line ${headerLine + 1}: column "${names[0]}" starts at ${(probeRows[0][0] ?? '').trim()}, too large for seconds; quern reads a time column in seconds (or as ISO 8601 date-times): if these are milliseconds or microseconds since 1970, name the column time_ms or time_us${perSecond === 1 ? '' : ` (it is read in ${names[0]}'s unit now)`}, export seconds or date-times, or drop the column and declare sample_rate`);
    const bad = times.findIndex((t) => !Number.isFinite(t));
    if (bad >= 0) throw unreadableTime(probeLines[bad].no, probeRows[bad][0] ?? '');
    // The printed times' resolution, and the times in whole units of it: steps are compared exactly, in those units.
    const printed = Math.max(...probeRows.map((r) => decimals(r[0] ?? '')));
    const resolution = 10 ** -printed / perSecond;
    const units = printedUnits(probeRows.map((r) => r[0] ?? ''), printed) ?? Float64Array.from(times, (t) => Math.round((t - times[0]) / resolution));
    // A step within two units over the first rows of a whole number of units (1 kHz to the millisecond) may be a clock a
    // fraction of a unit off it, whose extra units those rows do not reach: the rate from a longer head, the probe's further
    // lines' times in whole units of the first rows' print from the first time.
    const short = printedRate(units, resolution), q = short.step / resolution;
    const rate = probeLines.length < PROBE_ROWS || !(Math.abs(q - Math.round(q)) * PROBE_ROWS < 2) ? short
      : printedRate(longerHead(units, (no) => lines[no - 1], probeLines[probeLines.length - 1].no, whole && unended ? lines.length - 1 : lines.length,
        (line) => timeValue(firstField(line, delimiter), decimalComma, perSecond), times[0], resolution), resolution);
    timeStep = rate.step;
    if (!(timeStep > 0)) throw new RecordingError(`line ${headerLine + 1}: the time column does not increase; sort the rows by time`);
    // Times printed more coarsely than they step repeat, and a lost sample among them cannot be seen: refused unless a rate
    // is declared, which the printed times are then held to (each within half a unit of its place on the declared grid).
    const repeat = times.findIndex((t, i) => i > 0 && t === times[i - 1]);
    coarse = rate.coarse && repeat > 0;
    if (coarse && declaredSampleRate == null) {
      throw new RecordingError(`line ${probeLines[repeat].no}: the time ${(probeRows[repeat][0] ?? '').trim()} repeats the line before: printed to ${printed} decimals, the time column cannot tell its samples apart (about ${(timeStep * 1e3).toPrecision(3)} ms); export the times with more decimals, or remove the time column and set ${sampleRateWhere} (or set it and keep the column: its times are then held to that rate)`);
    }
    if (coarse) {
      const off = offGrid(units, 1 / (declaredSampleRate! * resolution));
      if (off >= 0) throw new RecordingError(`line ${probeLines[off].no}: the time ${(probeRows[off][0] ?? '').trim()} lies more than half a printed unit (${printed} decimals) from where a row at the declared ${declaredSampleRate} Hz would be: rows were lost or the rate is not ${declaredSampleRate} Hz; correct ${sampleRateWhere} or check the export`);
      notes.push(`the time column is printed to ${printed} decimals, coarser than its step at the declared ${declaredSampleRate} Hz (rows share a printed time): its times are held to that rate's grid as they are read, but a row lost shows only as the rows after it leaving the grid (not at all where fewer rows than a quarter of a printed unit are lost); export the times with more decimals to have every row checked`);
      gridFrom = times[0]; gridUnit = resolution; gridStep = 1 / (declaredSampleRate! * resolution); printedDecimals = printed;
      gridSlope = gridDrift(units, gridStep);
    }
    // Rows lost are counted in steps of the rate as quoted (25600 Hz, not its estimate's last digits, which a gap of millions
    // of steps multiplies), give or take the span of steps the printed times allow; times printed coarser than their step show none.
    // A regular step rounded to the printed unit lies less than one unit from the nominal (a full unit only where both its
    // times are ties of rounding, times offset half a unit from a whole step), or within 1 % of it; plus the error of
    // subtracting two parsed times (IEEE 754 unit roundoff). So a step of two units is a row lost at one unit a step.
    const largest = Math.max(...times.map(Math.abs));
    timeTolerance = Math.max(0.01 * timeStep, resolution * (1 - 1e-6)) + 8 * 2 ** -53 * largest;
    timeHalf = resolution / 2 + 8 * 2 ** -53 * largest;
    lostStep = coarse ? NaN : 1 / rate.rate;
    stepUncertainty = 1 / rate.lowest - 1 / rate.highest;
    // Date-times give the start; so do POSIX seconds, as loggers print them.
    const numeric = /^-?[\d.,eE+]+$/.test((probeRows[0][0] ?? '').trim());
    startTime = numeric ? startOfTimes(times[0]) : startAt(times[0] * 1000);
    // Held against the declaration at 0.5 % beyond the rates the printed times allow.
    if (declaredSampleRate != null && !coarse && !(declaredSampleRate >= 0.995 * rate.lowest && declaredSampleRate <= 1.005 * rate.highest)) {
      // The start is read: the recording is still placed in a period by it.
      throw withStart(new RecordingError(`line ${headerLine + 1}: the time column steps at ${rate.rate.toPrecision(6)} Hz but the declaration says ${declaredSampleRate} Hz; correct ${sampleRateWhere} or check the export${perSecond === 1 ? unitHint(declaredSampleRate / rate.rate, names[0]) : ''}`), startTime);
    }
    sampleRate = declaredSampleRate ?? rate.rate;
    if (coarse) { timeStep = 1 / declaredSampleRate!; timeTolerance = resolution * (1 + 1e-6) + 8 * 2 ** -53 * largest; }
    if (!timeOf!.stated && numeric) secondsAssumed = names[0];
  } else if (declaredSampleRate == null) {
    throw new RecordingError(`line ${headerLine}: no time column (first column "${names[0]}") and no sample rate given; set ${sampleRateWhere} or export the time column`);
  }

  const width = names.length;
  async function* chunks(): AsyncGenerator<Float64Array[]> {
    const out = channelNames.map(() => new Float64Array(chunkFrames));
    // The text alone: trailing NUL padding is left out.
    const lineReader = createInterface({ input: createReadStream(path, { encoding: 'utf8', end: end - 1 }), crlfDelay: Infinity });
    let lineNo = 0, k = 0, shortRows = 0, firstShort = 0;
    const notNumbers = { count: 0, line: 0, column: '', cell: '' }, beyond = { count: 0, line: 0 };
    const steps = stepCounter(timeStep, timeTolerance);
    const lostRows = lostRowCounter(lostStep, timeTolerance, stepUncertainty, mostLostRows, timeHalf);
    const grid = coarse ? gridWatch(gridStep, gridSlope) : null, leftGrid = { line: 0, text: '' };
    // In a file without a final line end each data line is held until the next arrives, so the last can be judged (and left out) before it is read.
    let held: { raw: string; line: number } | null = null, before: string[] | null = null;
    const source = unended ? withEnd(lineReader) : lineReader;
    try {
      for await (const next of source) {
        let raw: string, at: number;
        if (next === END) {
          if (!held) break;
          ({ raw, line: at } = held);
          const cut = cutNote(raw, at, splitFields(raw.replace(/^\uFEFF/, ''), delimiter), before, decimalComma);
          if (cut) { notes.push(cut); break; }
        } else {
          lineNo++;
          if (lineNo <= headerLine || !isData(next)) continue;
          if (next.includes('\0')) throw nulInText(await nulOffset(path, end), lineNo);
          if (!unended) { raw = next; at = lineNo; }
          else {
            const was = held;
            held = { raw: next, line: lineNo };
            if (!was) continue;
            ({ raw, line: at } = was);
          }
        }
        const cells = splitFields(raw.replace(/^\uFEFF/, ''), delimiter);
        if (unended) before = cells;
        // A row may end with or without the delimiter of an unnamed empty last column.
        if ((cells.length < width || cells.length > fields) && shortRows++ === 0) firstShort = at;
        for (let c = width; c < cells.length && c < fields; c++) if (cells[c].trim() !== '' && beyond.count++ === 0) beyond.line = at;
        if (timeColumn === 0) {
          const t = timeValue(cells[0] ?? '', decimalComma, perSecond);
          if (!Number.isFinite(t)) throw unreadableTime(at, cells[0] ?? '');
          const lost = lostRows.before(t, (cells[0] ?? '').trim(), at);
          // Coarse times: the row's printed units from the first, against the declared grid.
          const off = grid != null && grid.off(Math.round((t - gridFrom) / gridUnit));
          if (off && leftGrid.line === 0) Object.assign(leftGrid, { line: at, text: (cells[0] ?? '').trim() });
          steps.add(t, lost > 0, off);
          // The rows a logger dropped, as missing samples in their places, a chunk at a time however long the gap.
          if (lost > 0) k = yield* missingSamples(out, k, lost);
        }
        for (let c = 0, j = 0; c < width; c++) {
          if (c === timeColumn) continue;
          const cell = (cells[c] ?? '').trim();
          const v = sampleValue(cell, decimalComma);
          if (Number.isNaN(v) && !isMissingMark(cell) && notNumbers.count++ === 0) Object.assign(notNumbers, { line: at, column: names[c], cell });
          out[j++][k] = v;
        }
        if (++k === chunkFrames) { yield out; k = 0; }
      }
      if (k > 0) yield out.map((a) => a.subarray(0, k));
    } finally {
      lineReader.close();
    }
    if (timeColumn === 0) keepSteps(recording, steps);
    if (timeColumn === 0 && lostRows.result().rows > 0) notes.push(lostRowsNote(lostRows.result()));
    if (grid != null && grid.departures > 0) notes.push(offGridNote(grid.departures, grid.widest, leftGrid.line, leftGrid.text, sampleRate, printedDecimals));
    if (padding > 0) notes.push(paddingNote(padding));
    if (shortRows > 0) notes.push(`${shortRows} rows have a different number of fields than the header (first at line ${firstShort}); missing cells count as missing samples`);
    if (notNumbers.count > 0) notes.push(`${notNumbers.count} cells are not numbers (first at line ${notNumbers.line}, column "${notNumbers.column}": "${notNumbers.cell}"); they count as missing samples`);
    if (beyond.count > 0) notes.push(`${beyond.count} rows hold values in the unnamed last column, empty in the first rows and so not read (first at line ${beyond.line}); name the column in the header to read it`);
  }
  const recording: Recording = {
    format: 'csv', channelCount: channelNames.length, sampleRate, frames: null, encoding: decimalComma ? 'text (decimal comma)' : 'text',
    bits: null, normalised: false, startTime, channelNames, notes, chunks, close: async () => {},
    ...(secondsAssumed != null ? { secondsAssumed } : {}),
  };
  return recording;
}
