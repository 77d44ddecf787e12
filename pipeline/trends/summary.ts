// The terminal's lines on what changed: the counts, then the strongest changes, one line each.
import { plainNumber as num } from '../outputs/plain-number.js';
import type { ChangeItem, ChangesReport } from './changes.js';
import { storedText, type StaleCauseName } from './stale-cause.js';

// A value that rounds to zero carries no sign.
const signed = (v: number, digits = 1) => { const text = Math.abs(v).toFixed(digits); return Number(text) === 0 ? text : `${v > 0 ? '+' : '−'}${text}`; };
const day = (t: string | null, recording: string) => (t ? t.slice(0, 10) : recording);

/** "acc_de env_rms 4.845 m/s^2 on 2026-11-21: +18.0 dB on its baseline 0.61 (score +69), since 2026-11-20" */
export function changeLine(c: ChangeItem): string {
  const unit = c.unit === '1' ? '' : ` ${c.unit}`;
  // Below the measurable floor a figure is rounding: a change from or to it is told as a bound on the floor, never in dB on the rounding.
  const floor = c.floor ? `the measurable floor ${num(c.floor.level)}${unit} (${c.unit === c.channel_unit ? '' : 'from '}10⁻⁶ of the channel's RMS)` : '';
  const db = c.change_db == null ? null : c.floor?.below === 'baseline' ? `at least ${signed(c.change_db)} dB` : c.floor?.below === 'value' ? `below ${floor}, a fall of at least ${Math.abs(c.change_db).toFixed(1)} dB` : `${signed(c.change_db)} dB`;
  const how = [db, c.score != null ? `score ${signed(c.score, 0)}` : null].filter(Boolean).join(', ');
  const against = c.floor?.below === 'baseline' ? ` from a baseline below ${floor}` : c.baseline != null ? ` against its baseline ${num(c.baseline)}${unit}` : '';
  const limit = c.limit ? `; at or above its ${c.limit} limit ${num(c.limits![c.limit]!)}${unit}` : '';
  const since = c.since.recording !== c.recording ? `, since ${day(c.since.start_time, c.since.recording)}` : '';
  const held = c.held ? ' (back inside its threshold, not yet by the deadband)' : '';
  return `${c.group} ${c.channel} ${c.feature} ${num(c.value)}${unit} on ${day(c.start_time, c.recording)}${how ? `: ${how}` : ''}${against}${limit}${held}${since}${failedAfterText(c)}`;
}

/** "; the latest usable value: 2026-03-09's recording failed the data-quality checks (saturation)", where the run's last recording of the channel failed them. */
export const failedAfterText = (c: Pick<ChangeItem, 'failed_after'>): string =>
  c.failed_after ? `; the latest usable value: ${day(c.failed_after.start_time, c.failed_after.recording)}'s recording failed the data-quality checks (${c.failed_after.flags.join(', ') || 'its channel fails'})` : '';

/** "2 more usable recordings", or "1 to 2 more usable recordings" where channels differ. */
const toCome = ({ fewest, most }: { fewest: number; most: number }) => `${fewest === most ? most : `${fewest} to ${most}`} more usable ${most === 1 ? 'recording' : 'recordings'}`;

/** The groups named, the first `named` of them, and how many more. */
const someGroups = (groups: string[], named: number) => groups.slice(0, named).join(', ') + (groups.length > named ? `, and ${groups.length - named} more` : '');

/** One line for the baselines waiting only for recordings to come: their channel features, their group or groups, how many more. */
export function formingLine(forming: NonNullable<ChangesReport['forming_baselines']>, named = 3): string {
  const features = forming.reduce((n, g) => n + g.channel_features, 0);
  const more = { fewest: Math.min(...forming.map((g) => g.more_recordings.fewest)), most: Math.max(...forming.map((g) => g.more_recordings.most)) };
  const firsts = [...new Set(forming.map((g) => g.first))].sort((a, b) => a - b);
  const where = forming.length === 1 ? `group ${forming[0].group}` : `${forming.length} groups (${someGroups(forming.map((g) => g.group), named)})`;
  return `  no baseline yet for ${features} channel ${features === 1 ? 'feature' : 'features'} of ${where}, so no change verdict: ${features === 1 ? 'it waits' : 'they wait'} for ${toCome(more)} (baselines form from the first ${firsts.join(' or ')}); each is in quality.json (changes.unformed_baselines)`;
}

/** How many of the changes are new since the output folder's previous run, and how many it reported already; null without changes or news. */
export function newsLine(r: ChangesReport): string | null {
  if (!r.news || !r.items.length) return null;
  const n = r.news.new, all = r.items.length, before = all - n;
  if (!r.news.compared) return `  new:     all ${all}: no earlier report of this output folder is kept (cache/reported-changes.json) to compare with`;
  if (!n) return `  new:     none: the previous run into this output folder reported ${all === 1 ? 'it' : `all ${all}`} already`;
  return `  new:     ${n} new in this run (marked NEW, listed first after any alarms), ${before} reported already by the previous run into this output folder`;
}

/**
 * The channel features of a run by their latest verdict (`latest`), what each reads tonight; a report kept before those were
 * counted gives its items and its rows' totals instead.
 */
export const latestCounts = (r: ChangesReport): Record<'steady' | 'changed' | 'alarm' | 'unscored', number> => {
  if (r.latest) return r.latest;
  const alarm = r.items.filter((c) => c.verdict === 'alarm').length;
  return { alarm, changed: r.items.length - alarm, steady: r.totals.steady, unscored: r.totals.unscored };
};

export function changesSummary(r: ChangesReport, top = 5): string[] {
  const l = latestCounts(r), alarms = r.items.filter((c) => c.verdict === 'alarm').length, changed = r.items.length - alarms;
  // Features without a verdict are counted too: a run whose channels mostly fail the checks is no all-clear. Each channel
  // feature counts once, by what it reads at the end of the run, as the items do.
  const unscored = l.unscored ? `; ${l.steady} steady, ${l.unscored} with no verdict (baseline forming, held by figures of other options, or data unusable)` : '';
  const lines = [`  changes: ${alarms} channel ${alarms === 1 ? 'feature' : 'features'} at an alarm limit, ${changed} changed${unscored}, against ${r.baseline}${r.items.length ? ' (quality.html opens with them)' : ''}`];
  const news = newsLine(r);
  if (news) lines.push(news);
  // The items come alarms first, then new (news.ts), so a mail's first lines are what is at a limit and what is tonight's;
  // every alarm is listed, ahead of the `top` changes.
  const listed = r.items.slice(0, alarms + top);
  for (const c of listed) lines.push(`  ${c.verdict === 'alarm' ? 'ALARM  ' : 'CHANGED'} ${changeLine(c)}${c.new ? '; NEW' : ''}`);
  const untold = r.items.slice(listed.length).filter((c) => c.new).length;
  if (r.items.length > listed.length) lines.push(`  …and ${r.items.length - listed.length} more in quality.json and trends.parquet${untold ? ` (${untold} of them new)` : ''}`);
  if (r.stale_baselines) lines.push(`  ${r.stale_baselines} channel ${r.stale_baselines === 1 ? 'feature has' : 'features have'} no baseline: ${r.stale_baselines === 1 ? 'its' : 'their'} baseline recordings were reduced ${storedText(r.stale_causes ?? {}) ?? 'under other options, another declaration of their group or another version of quern'}; run once without --since, or with --since alone and unsharded, to recompute them`);
  const held = r.held_across_stale ?? [];
  if (held.length) {
    const features = held.reduce((n, c) => n + c.features.length, 0), stale = held.reduce((n, c) => n + c.stale_recordings, 0);
    const causes: Partial<Record<StaleCauseName, number>> = {};
    for (const x of held.flatMap((c) => c.stored)) causes[x] = (causes[x] ?? 0) + 1;
    const named = held.slice(0, top).map((c) => `${c.group} ${c.channel} (${c.features.join(', ')})`).join(', ') + (held.length > top ? `, and ${held.length - top} more channels` : '');
    lines.push(`  HELD    ${features} channel ${features === 1 ? 'feature' : 'features'} may hold a change the deadband carries across ${stale} stored ${stale === 1 ? 'recording' : 'recordings'} reduced ${storedText(causes)}, which this run did not compute again, so ${features === 1 ? 'its verdict' : 'their verdicts'} may differ from a whole run's: ${named}; run once without --since to compute them (quality.json: changes.held_across_stale)`);
  }
  // Baselines that wait only for recordings to come (a new archive's first nights) are counted in one line, whatever the groups;
  // the others named one by one.
  const forming = r.forming_baselines ?? [];
  if (forming.length) lines.push(formingLine(forming));
  const condensed = new Set(forming.flatMap((g) => g.unformed_entries));
  const unformed = (r.unformed_baselines ?? []).filter((_, i) => !condensed.has(i));
  for (const u of unformed.slice(0, top)) lines.push(`  no baseline yet for ${u.group} ${u.channel} (${u.features.join(', ')}), so no change verdict: ${u.why}`);
  if (unformed.length > top) lines.push(`  …and ${unformed.length - top} more channels without a baseline in quality.json (changes.unformed_baselines)`);
  if (r.excluded_recordings === 0) lines.push('  trends.baseline.exclude matches no stored recording: check its patterns against the recordings column of features.parquet');
  else if (r.excluded_recordings) lines.push(`  ${r.excluded_recordings} stored ${r.excluded_recordings === 1 ? 'recording is' : 'recordings are'} left out of the baselines (trends.baseline.exclude)`);
  for (const { restart, histories } of r.baseline_restarts ?? []) {
    lines.push(histories
      ? `  baseline formed again for ${restart}: ${histories} stored channel ${histories === 1 ? 'history' : 'histories'} (trends.baseline.restart)`
      : `  trends.baseline.restart ${restart} matches no stored channel: check its group and channel against features.parquet`);
  }
  for (const names of r.unmatched_limits ?? []) lines.push(`  trends.limits ${names} names no stored channel, so it can never be reached: check its channel and group against features.parquet`);
  // Baselines the period cannot complete are forming from it, not formed.
  const fromPeriod = r.period_baselines_forming ?? 0;
  for (const [n, how] of [[(r.period_baselines ?? 0) - fromPeriod, 'formed'], [fromPeriod, 'forming']] as const) {
    if (n > 0) lines.push(`  ${n} channel ${n === 1 ? 'feature has its baseline' : 'features have their baselines'} ${how} from this period only: no earlier results are stored; run once without --since to build ${n === 1 ? 'it' : 'them'} from the whole archive`);
  }
  return lines;
}
