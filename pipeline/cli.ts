#!/usr/bin/env node
// quern's command line: reduce, merge, export, check and peek, with documented exit codes.
import { availableParallelism } from 'node:os';
import yargs, { type Argv } from 'yargs';
import { hideBin } from 'yargs/helpers';
import { toolVersion } from './declare/package-files.js';
import { afterProgress, jsonLine, progressFor } from './outputs/progress.js';
import { failedOf, quietGroupsOf, summaryText, type RunRecord } from './outputs/report.js';
import { checkPeriod, parseShard, parseSpan, parseWhen } from './select/select.js';
import { WriteFailed } from './outputs/staged.js';
import { UsageError } from './declare/yaml-file.js';
import { didYouMean, likelyMeant } from './declare/nearest-names.js';
import { settleEngine } from './engine-settings.js';
import type { ChangesReport } from './trends/changes.js';
import { mergeCommand, reduceCommand } from './rerun-command.js';
import { checkDigits, checkExportOptions } from './export-options.js';
import { outputsWords, unfinishedLogLine, type OutputsStand } from './stop-on-signal.js';
import { codeAfterLogFailure, logFailedLine, watchLog } from './watch-log.js';

// Each command's modules load when it runs, so a command (or --help) pays only for its own.
const exporting = () => import('./exports/export.js');

/**
 * 0: every recording reduced (or checked) cleanly; 1: some recordings failed; 2: unusable input, output folder in use, a
 * failed write, or an unexpected error; 3: with --exit-on, what it names happened (a change, an alarm, a change or alarm new
 * in this run, a group fallen quiet).
 */
export const EXIT = { ok: 0, someFailed: 1, unusable: 2, changed: 3 } as const;

const EXIT_ON = {
  type: 'string',
  describe: 'Exit with code 3 when a watched feature of this run\'s recordings reads changed or at an alarm limit (changed), at an alarm limit (alarm), changed or at an alarm limit where the previous run into the output folder did not report it so (new), or a group has fallen quiet over a --since period (quiet); one or a comma list, such as new,quiet, so that a nightly job\'s scheduler can tell',
} as const;

const EXIT_ON_WORDS = ['changed', 'alarm', 'quiet', 'new'] as const;
type ExitOn = Set<(typeof EXIT_ON_WORDS)[number]>;

/** --exit-on's words; an unknown one is a usage error naming the ones there are. */
function parseExitOn(text: string | string[] | undefined): ExitOn {
  // Given more than once (--exit-on changed --exit-on quiet), the words of each count.
  const words = [text ?? ''].flat().join(',').split(',').map((w) => w.trim()).filter(Boolean);
  const unknown = words.filter((w) => !(EXIT_ON_WORDS as readonly string[]).includes(w));
  if (unknown.length || (text != null && !words.length)) throw new UsageError(`--exit-on: "${text}" is not changed, alarm, quiet or a comma list of them (alarm,quiet), nor new, which may stand alone or in the list (new,quiet): a change or alarm the previous run did not report`);
  return new Set(words) as ExitOn;
}

/** The run's exit code: 3 when what --exit-on names happened, with a line saying what (before 1: it is what the job asked to be told), else 1 when recordings failed. */
function exitCodeOf(r: RunRecord, changes: ChangesReport | null | undefined, exitOn: ExitOn): { code: number; said: string | null } {
  const items = changes?.items ?? [];
  const alarms = exitOn.has('alarm') || exitOn.has('changed') ? items.filter((c) => c.verdict === 'alarm').length : 0;
  const changed = exitOn.has('changed') ? items.length - alarms : 0;
  const quiet = exitOn.has('quiet') ? quietGroupsOf(r).length : 0;
  const fresh = exitOn.has('new') ? items.filter((c) => c.new).length : 0;
  const failed = failedOf(r);
  const said = [
    alarms ? `${alarms} channel ${alarms === 1 ? 'feature' : 'features'} at an alarm limit` : null,
    changed ? `${changed} channel ${changed === 1 ? 'feature' : 'features'} changed` : null,
    fresh ? `${fresh} channel ${fresh === 1 ? 'feature' : 'features'} new in this run (changed or at an alarm limit, not so reported by the previous run)` : null,
    quiet ? `${quiet} ${quiet === 1 ? 'group' : 'groups'} quiet over the period` : null,
  ].filter(Boolean);
  if (!said.length) return { code: failed > 0 ? EXIT.someFailed : EXIT.ok, said: null };
  return { code: EXIT.changed, said: `  exit code 3: ${said.join(', ')} (--exit-on ${[...exitOn].join(',')})${failed ? `; ${failed} ${failed === 1 ? 'recording' : 'recordings'} failed as well` : ''}\n` };
}

/** The code, its line (if any) written after the closing lines. */
function exitCodeSaid(r: RunRecord, changes: ChangesReport | null | undefined, exitOn: ExitOn): number {
  const { code, said } = exitCodeOf(r, changes, exitOn);
  if (said) process.stdout.write(said);
  return code;
}

/** An export that failed after a run wrote its outputs says that those are in place; exit code 2 all the same, since the export asked for is missing. */
async function exportAfterRun(e: unknown): Promise<never> {
  const { ExportFailed } = await exporting();
  throw e instanceof ExportFailed ? e.afterRun() : e;
}

const EXPORT_FORMAT_OPTIONS = {
  bom: { type: 'boolean', default: false, describe: 'CSV: start with a UTF-8 byte-order mark' },
  'decimal-comma': { type: 'boolean', default: false, describe: 'CSV: semicolon-separated with decimal commas' },
  digits: { type: 'number', describe: 'Round numbers to this many significant digits (default: full double precision)' },
  wide: { type: 'boolean', default: false, describe: 'Also a wide layout: one row per recording, channel-prefixed columns' },
} as const;

const EPILOGUE = `Exit codes: 0 every recording reduced; 1 some recordings failed (the rest are in the table); 2 unusable input (no archive, invalid declaration or spec), the output folder in use by another run, outputs or exports that could not be written, or an unexpected error in quern (the previous outputs are kept); 3 with --exit-on, what it names happened (a feature changed or at an alarm limit, one new in this run, a group quiet).`;

const fmt = (v: unknown) => (typeof v === 'number' ? (Number.isInteger(v) ? String(v) : v.toPrecision(6)) : v == null ? '—' : String(v));

/**
 * yargs renders the whole help text before it runs a command, to show it should the command fail; quern's failures
 * print their own message and never the help, so that rendering (some tens of milliseconds of every run) is skipped.
 * `--help` renders as before.
 */
function skipHelpRendering(cli: Argv): void {
  const usage = (cli as unknown as { getInternalMethods?: () => { getUsageInstance?: () => { cacheHelpMessage?: () => void } } }).getInternalMethods?.().getUsageInstance?.();
  if (usage?.cacheHelpMessage) usage.cacheHelpMessage = () => {};
}

/** --jobs as given, refused unless it is a whole number of worker threads from 1 up. */
function jobsOf(jobs: number): number {
  if (!Number.isInteger(jobs) || jobs < 1) throw new UsageError(`--jobs takes a whole number of worker threads, 1 or more (got ${String(jobs)})`);
  return jobs;
}

/** Options whose value may begin with a minus sign, which yargs would otherwise split into short flags ("-5d" as -5 -d). */
const STORAGE_LIMIT = 'End the run when the archive\'s or output folder\'s storage has not answered for this long (a network share gone away), rather than wait for ever holding the lock (2m, 5m)';
/** A limit that must be a span of some time; `noTime` says what a span of none would do. */
const positiveSpan = (noTime: string) => (text: string): number => {
  const ms = parseSpan(text);
  if (ms <= 0) throw new Error(`${noTime}; give a span such as 5m`);
  return ms;
};
const storageSpan = positiveSpan('a storage limit of no time would end every run');

const SIGNED_VALUE_OPTIONS = ['--since', '--until', '--stale-lock-after', '--stall-limit', '--storage-limit', '--settle'];

/** `--since -5d` joined as `--since=-5d`, so quern judges the value and names the option, instead of "Unknown arguments: 5, d". */
export function joinSignedValues(argv: string[]): string[] {
  const out: string[] = [];
  for (let i = 0; i < argv.length; i++) {
    if (SIGNED_VALUE_OPTIONS.includes(argv[i]) && /^-[\d.]/.test(argv[i + 1] ?? '')) out.push(`${argv[i]}=${argv[++i]}`);
    else out.push(argv[i]);
  }
  return out;
}

/** An option's value parsed, its error naming the option and the value as given. */
/** Refuses an option of one value given more than once (the parser makes a list of it), naming it. */
function givenOnce(a: Record<string, unknown>, options: string[]): void {
  for (const option of options) {
    once(option, a[option.replace(/-(\w)/g, (_, c: string) => c.toUpperCase())]);
  }
}

/** The command line's parser makes a list of an option given twice: which one was meant is not for quern to guess. */
function once(option: string, value: unknown): void {
  if (Array.isArray(value)) throw new UsageError(`--${option} is given ${value.length} times (${value.join(', ')}); give it once`);
}

function optionValue<T>(option: string, text: string, parse: (text: string) => T): T {
  once(option, text);
  try {
    return parse(text);
  } catch (e) {
    throw new UsageError(`--${option} ${text === '' ? '(empty)' : text}: ${(e as Error).message}`);
  }
}

/** Why a command stopped, with its exit code: a `quern:` line, or with --log json an `error` event in the JSON stream. */
type Tell = (message: string, exitCode: number, details?: { stack?: string }) => void;
// A log (standard error) whose writes failed keeps the run going; from then on its ending is told on standard output.
const log = watchLog(process.stderr);
const logStream = () => (log.failure() ? process.stdout : process.stderr);
/** The last line told on standard error, said again on standard output should the log have failed to take it. */
let toldToLog: string | null = null;
const plainTell: Tell = (message, _code, details) => {
  const line = `quern: ${message}\n${details?.stack ? `${details.stack}\n` : ''}`;
  toldToLog = log.failure() ? null : line;
  logStream().write(line);
};
const jsonTell: Tell = (message, exitCode, details) => {
  toldToLog = log.failure() ? null : `quern: ${message}\n${details?.stack ? `${details.stack}\n` : ''}`;
  jsonLine(logStream(), { event: 'error', message, exit_code: exitCode, ...details });
};

/** How the command says why it stopped, here and in the handlers of errors nothing waits for: plain until --log json is read. */
let tell: Tell = plainTell;

/** Where the run's or merge's outputs stand, as it tells at every step, so that a failure's line says it truly. */
let stand: OutputsStand = 'previous';
const follow = (s: OutputsStand) => { stand = s; };
/** The exit code of a run or merge that completed, once its outputs and run.json are in place; null until then. */
let completedCode: number | null = null;
/** A run or merge began (its outputs' standing is then worth telling). */
let writesOutputs = false;

const COMMANDS = ['reduce', 'merge', 'export', 'check', 'peek'];

/** A first word a slip away from a command ("reduc"), refused with the one meant, rather than as an unknown argument. */
function refuseNearCommand(argv: string[]): void {
  const first = argv[0];
  if (first == null || first.startsWith('-') || COMMANDS.includes(first)) return;
  const meant = likelyMeant(first, COMMANDS, 1);
  if (meant.length) throw new UsageError(`"${first}" is not a command of quern; ${didYouMean(meant)} (the commands: ${COMMANDS.join(', ')}; quern --help lists them)`);
}

async function main(argv: string[]): Promise<number> {
  let code: number = EXIT.ok;
  try {
    refuseNearCommand(argv);
  } catch (e) {
    tell((e as Error).message, EXIT.unusable);
    return EXIT.unusable;
  }
  const cli = yargs(argv)
    .scriptName('quern')
    .usage('$0 <command> [options]\n\nReduces archives of multichannel test recordings to tables of trustworthy numbers.')
    .command('reduce <archive>', 'Reduce every recording of an archive to features.parquet, windows.parquet, trends.parquet, spectra.parquet, quality.json/.html and run.json', (y: Argv) => y
      .positional('archive', { type: 'string', demandOption: true, describe: 'Archive folder with archive.yaml at its root' })
      .option('out', { type: 'string', describe: 'Output folder (also keeps the per-recording results a re-run reuses)', defaultDescription: '<archive>.reduced beside the archive' })
      .option('spec', { type: 'string', describe: 'Reduction spec (YAML)', defaultDescription: '<archive>/reduction.yaml, else the built-in default' })
      .option('jobs', { type: 'number', defaultDescription: `the number of cores (${availableParallelism()})`, describe: 'Worker threads' })
      .option('force', { type: 'boolean', default: false, describe: 'Recompute everything; reuse nothing from earlier runs' })
      .option('hash', { type: 'boolean', default: false, describe: 'Identify unchanged recordings by a content hash, not only size and modification time' })
      .option('retry-failed', { type: 'boolean', default: false, describe: 'Reduce again the recordings that failed before, though file, declaration and spec are unchanged (once storage or a reader is mended)' })
      .option('shard', { type: 'string', describe: 'Reduce one stable share, K/N (1 ≤ K ≤ N), or auto (Slurm array / Kubernetes indexed job); writes part files for quern merge' })
      .option('since', { type: 'string', describe: 'Only recordings starting at or after this date, date-time (UTC unless it names a zone) or span back from now (7d, 12h)' })
      .option('until', { type: 'string', describe: 'Only recordings starting before this date, date-time or span' })
      .option('log', { choices: ['auto', 'plain', 'json'] as const, defaultDescription: 'auto', describe: 'Progress: a bar on a terminal (auto), plain lines, or JSON lines' })
      .option('quiet', { type: 'boolean', default: false, describe: 'No progress output' })
      .option('stale-lock-after', { type: 'string', defaultDescription: '24h', describe: 'Take over the output folder\'s lock when held from another host and not refreshed for this long (30m, 12h, 2d)' })
      .option('stall-limit', { type: 'string', defaultDescription: '5m', describe: 'Fail a recording whose reduction makes no progress for this long, and go on (90s, 5m, 1h)' })
      .option('storage-limit', { type: 'string', defaultDescription: '5m', describe: STORAGE_LIMIT })
      .option('settle', { type: 'string', describe: 'Leave recordings modified within this span before the scan to the next run, as captures that may still be written (off unless given; 2m, 10m)' })
      .option('exit-on', EXIT_ON)
      .option('export', { type: 'string', describe: 'Also write spreadsheet copies: csv, xlsx or csv,xlsx (see quern export)' })
      .options(EXPORT_FORMAT_OPTIONS),
    async (a) => {
      if (a.log === 'json') tell = jsonTell;
      givenOnce(a, ['out', 'spec', 'jobs', 'shard', 'log', 'export']);
      checkExportOptions(a);
      const exports = a.export ? await exporting() : null;
      const exportTo = exports && a.export ? exports.parseFormats(a.export) : null;
      let shard = null, since = null, until = null, staleLockAfterMs = 0;
      // An empty --since (an unset variable in a script) is refused, never taken as "every recording".
      since = a.since != null ? optionValue('since', a.since, parseWhen) : null;
      until = a.until != null ? optionValue('until', a.until, parseWhen) : null;
      staleLockAfterMs = optionValue('stale-lock-after', a.staleLockAfter ?? '24h', parseSpan);
      const stallMs = optionValue('stall-limit', a.stallLimit ?? '5m', positiveSpan('a stall limit of no time would stop every recording'));
      const storageMs = optionValue('storage-limit', a.storageLimit ?? '5m', storageSpan);
      const settleMs = a.settle != null ? optionValue('settle', a.settle, parseSpan) : 0;
      const exitOn = parseExitOn(a.exitOn);
      if (exitOn.has('quiet') && since == null && until == null) throw new UsageError('--exit-on quiet: a group is named quiet only over a period (--since, --until), so without one it could never fire; add --since (7d, say) or drop quiet');
      try {
        shard = a.shard ? parseShard(a.shard) : null;
        checkPeriod(since, until, a.since, a.until);
      } catch (e) {
        throw new UsageError((e as Error).message);
      }
      writesOutputs = true;
      const progress = progressFor(process.stderr, { mode: a.quiet ? 'quiet' : a.log ?? 'auto' });
      // Whatever stops the run from here on (an error, a signal) is told on a line of its own, not after the bar.
      tell = afterProgress(progress, tell);
      const { runReduce, defaultOut } = await import('./run.js');
      // Only the options given (the parser keeps no defaults for those with a value, so it tells them apart); the period's
      // bounds are written in UTC, so a re-run covers the same one.
      const command = reduceCommand(a.archive as string, {
        out: a.out ?? defaultOut(a.archive as string), spec: a.spec ?? null, jobs: a.jobs, force: a.force, hash: a.hash, retryFailed: a.retryFailed, shard, since, until,
        settle: a.settle ?? null, staleLockAfter: a.staleLockAfter ?? null, stallLimit: a.stallLimit ?? null, storageLimit: a.storageLimit ?? null,
        exitOn: a.exitOn != null ? [a.exitOn].flat().join(',') : null, log: a.log ?? null, quiet: a.quiet,
        export: a.export ?? null, bom: a.bom, decimalComma: a.decimalComma, digits: a.digits ?? null, wide: a.wide,
      });
      const { record, quality, threadsGivenUp } = await runReduce({ archive: a.archive as string, out: a.out ?? null, spec: a.spec ?? null, jobs: jobsOf(a.jobs ?? availableParallelism()), progress, force: a.force, hash: a.hash, retryFailed: a.retryFailed, shard, since, until, staleLockAfterMs, stallMs, storageMs, settleMs, tell: (message, exitCode, details) => tell(message, exitCode, details), stand: follow, command });
      const ending = exitCodeOf(record, quality.changes, exitOn);
      completedCode = ending.code;
      process.stdout.write(summaryText(record, quality) + '\n');
      if (exports && exportTo && !shard) for (const f of await exports.runExport(record.out, { to: exportTo, bom: a.bom, decimalComma: a.decimalComma, digits: a.digits ?? null, wide: a.wide }).catch(exportAfterRun)) process.stdout.write(`  export:  ${f}\n`);
      if (a.log === 'json') {
        // What a job reading the log needs besides the counts: what changed in the machine, which rigs fell quiet, what the
        // run found of earlier ones (a lock taken over, stored entries damaged; under run.json's names), and how it ends.
        const changes = quality.changes ? { alarm: quality.changes.items.filter((c) => c.verdict === 'alarm').length, changed: quality.changes.items.filter((c) => c.verdict === 'changed').length, new: quality.changes.items.filter((c) => c.new).length } : null;
        const late = record.period?.late_arrivals, renewed = record.period?.recomputed_for_baselines;
        progress.event?.('summary', {
          ...record.counts, seconds: record.timings.total_s, quality: quality.totals.channels, changes, quiet_groups: quietGroupsOf(record),
          ...(late ? { late_arrivals: { count: late.count, reduced: late.reduced, failed: late.failed, earlier: (late.earlier?.count ?? 0) + (late.earlier?.unlisted ?? 0) } } : {}),
          ...(record.period?.gap ? { gap: { count: record.period.gap.count, earliest_start: record.period.gap.earliest_start, latest_start: record.period.gap.latest_start } } : {}),
          ...(renewed ? { recomputed_for_baselines: { count: renewed.count, failed: renewed.failed } } : {}),
          lock: record.lock, store: { damaged: record.store.damaged, ...(record.store.cut_short.length ? { cut_short: record.store.cut_short } : {}) }, exit_code: ending.code,
        });
      }
      if (ending.said) process.stdout.write(ending.said);
      code = ending.code;
      // Threads given up for a stall may be waiting in the operating system, where nothing stops them.
      if (threadsGivenUp) (await import('./reduce/end-despite-stuck-threads.js')).endDespiteStuckThreads(threadsGivenUp);
    })
    .command('export <reduced>', 'Write spreadsheet-ready copies of a reduced folder\'s tables beside them: CSV per table, one XLSX workbook', (y: Argv) => y
      .positional('reduced', { type: 'string', demandOption: true, describe: 'A folder quern reduce or quern merge wrote' })
      .option('to', { type: 'string', demandOption: true, describe: 'csv, xlsx or csv,xlsx' })
      .options(EXPORT_FORMAT_OPTIONS),
    async (a) => {
      once('digits', a.digits);
      checkDigits(a.digits);
      const { parseFormats, runExport } = await exporting();
      for (const f of await runExport(a.reduced as string, { to: parseFormats(a.to), bom: a.bom, decimalComma: a.decimalComma, digits: a.digits ?? null, wide: a.wide })) process.stdout.write(`${f}\n`);
    })
    .command('merge <out>', 'Combine the part files of sharded runs (quern reduce --shard) into the final tables and reports', (y: Argv) => y
      .positional('out', { type: 'string', demandOption: true, describe: 'The output folder every shard wrote into' })
      .option('jobs', { type: 'number', defaultDescription: `the number of cores (${availableParallelism()})`, describe: 'Worker threads' })
      .option('storage-limit', { type: 'string', defaultDescription: '5m', describe: STORAGE_LIMIT })
      .option('exit-on', EXIT_ON)
      .option('export', { type: 'string', describe: 'Also write spreadsheet copies: csv, xlsx or csv,xlsx (see quern export)' })
      .options(EXPORT_FORMAT_OPTIONS),
    async (a) => {
      givenOnce(a, ['jobs', 'export']);
      checkExportOptions(a);
      const storageMs = optionValue('storage-limit', a.storageLimit ?? '5m', storageSpan);
      const exitOn = parseExitOn(a.exitOn);
      const command = mergeCommand(a.out as string, {
        jobs: a.jobs, storageLimit: a.storageLimit ?? null, exitOn: a.exitOn != null ? [a.exitOn].flat().join(',') : null,
        export: a.export ?? null, bom: a.bom, decimalComma: a.decimalComma, digits: a.digits ?? null, wide: a.wide,
      });
      writesOutputs = true;
      const [{ parseFormats, runExport }, { runMerge }] = await Promise.all([exporting(), import('./commands/merge.js')]);
      const exportTo = a.export ? parseFormats(a.export) : null;
      const { record, quality } = await runMerge(a.out as string, { jobs: jobsOf(a.jobs ?? availableParallelism()), storageMs, stand: follow, command });
      completedCode = exitCodeOf(record, quality.changes, exitOn).code;
      process.stdout.write(summaryText(record, quality) + '\n');
      if (exportTo) for (const f of await runExport(record.out, { to: exportTo, bom: a.bom, decimalComma: a.decimalComma, digits: a.digits ?? null, wide: a.wide }).catch(exportAfterRun)) process.stdout.write(`  export:  ${f}\n`);
      code = exitCodeSaid(record, quality.changes, exitOn);
    })
    .command('check <archive>', 'Validate archive.yaml, the spec and every recording header; list what would be reduced (computes nothing)', (y: Argv) => y
      .positional('archive', { type: 'string', demandOption: true })
      .option('spec', { type: 'string', describe: 'Reduction spec (YAML) to validate' }),
    async (a) => {
      const { runCheck } = await import('./commands/check.js');
      const r = await runCheck(a.archive as string, { spec: a.spec ?? null });
      for (const x of r.recordings) process.stdout.write(`${x.ok ? 'ok    ' : 'FAILED'}  ${x.recording}  [${x.group}]  ${x.detail}\n`);
      for (const u of r.unmatched) process.stdout.write(`UNMATCHED  ${u}: no group in archive.yaml matches it\n`);
      for (const n of r.notes) process.stdout.write(`NOTE    ${n}\n`);
      const bad = r.recordings.filter((x) => !x.ok).length;
      process.stdout.write(`${r.recordings.length - bad} of ${r.recordings.length} recordings would be reduced; ${bad} failed, ${r.unmatched.length} unmatched; spec: ${r.spec}\n`);
      code = bad > 0 ? EXIT.someFailed : EXIT.ok;
    })
    .command('peek <recording>', 'Show one recording: header, channels, duration and statistics', (y: Argv) => y
      .positional('recording', { type: 'string', demandOption: true })
      .option('format', { choices: ['wav', 'flac', 'hdf5', 'mat', 'csv', 'raw'] as const, describe: 'Override the format inferred from the extension' })
      .option('sample-rate', { type: 'number', describe: 'Sample rate in Hz (raw files, CSV without a time column)' })
      .option('sample-type', { choices: ['uint8', 'int16', 'int24', 'int32', 'float32', 'float64'] as const, describe: 'Raw files: sample type' })
      .option('channels', { type: 'number', describe: 'Raw files: channel count' })
      .option('byte-order', { choices: ['little', 'big'] as const, default: 'little' as const, describe: 'Raw files: byte order' })
      .option('header-bytes', { type: 'number', default: 0, describe: 'Raw files: bytes to skip before the first frame' })
      .option('dataset', { type: 'string', array: true, describe: 'HDF5 files: the dataset holding every channel, or one per channel (repeat the option)' })
      .option('channel-axis', { choices: [0, 1] as const, describe: 'HDF5 and MAT-files: 0 when the dataset\'s or variable\'s rows are channels, 1 when its columns are' })
      .option('sample-rate-attribute', { type: 'string', describe: 'HDF5 files: attribute holding the sample rate ("name" or "/path@name")' })
      .option('start-time-attribute', { type: 'string', describe: 'HDF5 files: attribute holding the start time' })
      .option('sample-rate-dataset', { type: 'string', describe: 'HDF5 files: dataset holding the sample rate as its one value' })
      .option('start-time-dataset', { type: 'string', describe: 'HDF5 files: dataset holding the start time as its one value' })
      .option('time-dataset', { type: 'string', describe: 'HDF5 files: dataset holding each frame\'s time in seconds (the sample rate from its steps)' })
      .option('channel-names-attribute', { type: 'string', describe: 'HDF5 files: attribute holding the channels\' names, an array of text' })
      .option('variable', { type: 'string', array: true, describe: 'MAT-files: the variable holding every channel, or one per channel (repeat the option); "struct.field" for a field' })
      .option('sample-rate-variable', { type: 'string', describe: 'MAT-files: variable holding the sample rate' })
      .option('start-time-variable', { type: 'string', describe: 'MAT-files: variable holding the start time' })
      .option('time-variable', { type: 'string', describe: 'MAT-files: variable holding each sample\'s time in seconds (the sample rate from its steps)' })
      .option('channel-names-variable', { type: 'string', describe: 'MAT-files: variable holding the channels\' names (a cell array of text, or a char matrix of one name a row)' })
      .option('start-time-tag', { type: 'string', describe: 'FLAC files: Vorbis comment tag holding the start time' }),
    async (a) => {
      const layout = a.sampleType && a.channels ? { sample_type: a.sampleType, byte_order: a.byteOrder, channels: a.channels, header_bytes: a.headerBytes } : null;
      const hdf5 = a.dataset?.length ? { datasets: a.dataset, channel_axis: a.channelAxis ?? null, sample_rate_attribute: a.sampleRateAttribute ?? null, start_time_attribute: a.startTimeAttribute ?? null, ...(a.sampleRateDataset ? { sample_rate_dataset: a.sampleRateDataset } : {}), ...(a.startTimeDataset ? { start_time_dataset: a.startTimeDataset } : {}), ...(a.timeDataset ? { time_dataset: a.timeDataset } : {}), ...(a.channelNamesAttribute ? { channel_names_attribute: a.channelNamesAttribute } : {}) } : null;
      const mat = a.variable?.length ? { variables: a.variable, channel_axis: a.channelAxis ?? null, sample_rate_variable: a.sampleRateVariable ?? null, start_time_variable: a.startTimeVariable ?? null, ...(a.timeVariable ? { time_variable: a.timeVariable } : {}), ...(a.channelNamesVariable ? { channel_names_variable: a.channelNamesVariable } : {}) } : null;
      const flac = a.startTimeTag ? { start_time_tag: a.startTimeTag } : null;
      const { runPeek } = await import('./commands/peek.js');
      const { result: r, declaredBy } = await runPeek(a.recording as string, { format: a.format ?? null, sampleRate: a.sampleRate ?? null, layout, hdf5, mat, flac });
      if (r.status === 'failed') {
        process.stderr.write(`quern: ${a.recording}: ${r.reason}\n`);
        code = EXIT.someFailed;
        return;
      }
      const h = r.header!;
      const out = [
        `${a.recording}`,
        `  format      ${h.format} ${h.encoding}${h.bits ? `, ${h.bits}-bit` : ''}`,
        `  sample rate ${r.sampleRate} Hz`,
        `  duration    ${(r.frames / r.sampleRate!).toFixed(3)} s (${r.frames} frames)`,
        `  start       ${h.start_time ?? 'unknown'}`,
        `  declared by ${declaredBy ?? 'no archive.yaml (stored units)'}`,
        ...r.messages.map((m) => `  note        ${m}`),
        '',
      ];
      const cols = ['channel', 'unit', 'mean', 'std', 'rms', 'min', 'max', 'peak', 'crest_factor', 'skewness', 'kurtosis', 'quality', 'flags'];
      const table = [cols, ...r.rows.map((row) => cols.map((c) => fmt(row[c])))];
      const widths = cols.map((_, i) => Math.max(...table.map((t) => String(t[i]).length)));
      for (const t of table) out.push('  ' + t.map((v, i) => String(v).padStart(widths[i])).join('  '));
      process.stdout.write(out.join('\n') + '\n');
    })
    .demandCommand(1, 'Name a command: reduce, merge, export, check or peek.')
    .strict()
    .epilogue(EPILOGUE)
    .version(toolVersion)
    .help()
    .fail((msg, err) => {
      if (err) throw err;
      process.stderr.write(`quern: ${msg}\nRun "quern --help" for usage.\n`);
      process.exit(EXIT.unusable);
    });
  skipHelpRendering(cli);
  try {
    await cli.parseAsync();
  } catch (e) {
    if (e instanceof UsageError || e instanceof WriteFailed) {
      tell(e instanceof WriteFailed && stand !== 'previous' ? e.standing(outputsWords(stand)) : e.message, EXIT.unusable);
      return EXIT.unusable;
    }
    return unexpected(e);
  }
  return code;
}

/**
 * A fault in quern: not "some recordings failed" (1), since no table may have been written; its line says where the
 * outputs stand. A run that completed but could not write its closing lines (standard output on a full disk) ends with
 * 2 as well, not its own code: its outputs are right, but a job's log without its summary and --exit-on line must not
 * pass for a good night (as common practice, a program that cannot write its output fails); the line says no second run is needed.
 */
function unexpected(e: unknown): number {
  if (completedCode != null && (e as NodeJS.ErrnoException)?.syscall === 'write') {
    tell(unfinishedLogLine(stand, (e as Error).message, completedCode), EXIT.unusable);
    return EXIT.unusable;
  }
  tell(`stopped by an unexpected error; ${outputsWords(stand)}. Please report it with what follows:`, EXIT.unusable, { stack: (e as Error)?.stack ?? String(e) });
  return EXIT.unusable;
}

// One thrown where no caller waits (a callback, a stream's event) would otherwise end the process with Node's exit code 1.
process.on('uncaughtException', (e) => process.exit(unexpected(e)));
process.on('unhandledRejection', (e) => process.exit(unexpected(e)));

// A reader that quits early (`quern check … | head`) must not turn the run into a stack trace: it goes on, with its own exit code.
// Standard error's failures are the log's (watchLog, above), told once the command ends.
process.stdout.on('error', (e: NodeJS.ErrnoException) => { if (e.code !== 'EPIPE') throw e; });

/** The command's exit code, after the log's failure (if any) is named once: its last writes' errors arrive a turn later. */
async function afterLog(code: number): Promise<number> {
  await new Promise((r) => setImmediate(r));
  const failure = log.failure();
  if (!failure) return code;
  if (toldToLog) process.stdout.write(toldToLog);
  process.stdout.write(`${logFailedLine(failure, writesOutputs ? outputsWords(stand) : 'nothing else it does is missing', code)}\n`);
  return codeAfterLogFailure(code);
}

settleEngine();
process.exitCode = await afterLog(await main(joinSignedValues(hideBin(process.argv))));
