// The command a run records for running it again (its lock's holder, a shard's start, merge's and a refusal's advice; a
// merge's lock): the options given on the command line, none left at its default, each word quoted for a POSIX shell where needed.
import { resolve } from 'node:path';
import type { Shard } from './select/select.js';

/** What a reduce was given, paths absolute, the period's bounds in ms since the epoch (written back in UTC). */
export interface GivenOptions {
  out: string; spec?: string | null; jobs?: number; force?: boolean; hash?: boolean; retryFailed?: boolean; shard?: Shard | null;
  since?: number | null; until?: number | null; settle?: string | null; staleLockAfter?: string | null; stallLimit?: string | null; storageLimit?: string | null;
  exitOn?: string | null; log?: string | null; quiet?: boolean; export?: string | null; bom?: boolean; decimalComma?: boolean; digits?: number | null; wide?: boolean;
}

// POSIX shell quoting (common practice): a word of safe characters as it is, any other in single quotes, ' written as '\''.
export const shellWord = (word: string): string => (/^[A-Za-z0-9_@%+=:,./-]+$/.test(word) ? word : `'${word.replace(/'/g, `'\\''`)}'`);

export const shellCommand = (words: string[]): string => words.map(shellWord).join(' ');

/** The words of `quern reduce` with what it was given: a value named when given, a switch when on. */
export function reduceWords(archive: string, o: GivenOptions): string[] {
  const words = ['quern', 'reduce', resolve(archive), '--out', resolve(o.out)];
  const value = (option: string, v: string | number | null | undefined) => { if (v != null && v !== '') words.push(`--${option}`, String(v)); };
  const when = (option: string, on: boolean | undefined) => { if (on) words.push(`--${option}`); };
  value('spec', o.spec != null ? resolve(o.spec) : null);
  value('since', o.since != null ? new Date(o.since).toISOString() : null);
  value('until', o.until != null ? new Date(o.until).toISOString() : null);
  when('force', o.force); when('hash', o.hash); when('retry-failed', o.retryFailed);
  value('settle', o.settle);
  value('jobs', o.jobs);
  value('stale-lock-after', o.staleLockAfter); value('stall-limit', o.stallLimit); value('storage-limit', o.storageLimit);
  value('exit-on', o.exitOn);
  value('log', o.log); when('quiet', o.quiet);
  value('export', o.export); when('bom', o.bom); when('decimal-comma', o.decimalComma); value('digits', o.digits); when('wide', o.wide);
  // Last, where merge's advice ("run shard K/N again (…)") and a reader's eye look for it.
  value('shard', o.shard ? `${o.shard.k}/${o.shard.n}` : null);
  return words;
}

export const reduceCommand = (archive: string, o: GivenOptions): string => shellCommand(reduceWords(archive, o));

/** What a merge was given. */
export interface GivenMergeOptions {
  jobs?: number; storageLimit?: string | null; exitOn?: string | null; export?: string | null; bom?: boolean; decimalComma?: boolean; digits?: number | null; wide?: boolean;
}

/** The words of `quern merge` with what it was given, for its lock. */
export function mergeWords(out: string, o: GivenMergeOptions = {}): string[] {
  const words = ['quern', 'merge', resolve(out)];
  const value = (option: string, v: string | number | null | undefined) => { if (v != null && v !== '') words.push(`--${option}`, String(v)); };
  const when = (option: string, on: boolean | undefined) => { if (on) words.push(`--${option}`); };
  value('jobs', o.jobs); value('storage-limit', o.storageLimit); value('exit-on', o.exitOn);
  value('export', o.export); when('bom', o.bom); when('decimal-comma', o.decimalComma); value('digits', o.digits); when('wide', o.wide);
  return words;
}

export const mergeCommand = (out: string, o: GivenMergeOptions = {}): string => shellCommand(mergeWords(out, o));
