// What the workbook's run sheet says of the recordings it holds: a period's slice of the archive, or the whole of it, from run.json.
import { utcText } from '../select/period-text.js';

interface RunRecord {
  counts?: { scanned?: number; selected?: number };
  period?: {
    since: number | null; until: number | null; selected: number; quiet_groups?: { group?: string }[];
    late_arrivals?: { count: number; reduced: boolean; failed?: number; earlier?: { count: number; unlisted: number } };
    recomputed_for_baselines?: { count: number }; recomputed_for_held_changes?: { count: number };
  } | null;
}

const recordings = (n: number) => `${n} ${n === 1 ? 'recording' : 'recordings'}`;

/** Rows of the run sheet naming the period the tables cover (`--since`, `--until`) and what run.json says of it. */
export function periodFacts(run: RunRecord): [string, string][] {
  const scanned = run.counts?.scanned, p = run.period;
  const archive = scanned != null ? `${recordings(scanned)} in the archive` : 'the archive';
  if (!p) return [['period', `none: the tables cover every recording of the archive (${archive})`]];
  const bounds = [p.since != null ? `from ${utcText(p.since)}` : '', p.until != null ? `until ${utcText(p.until)}, a start at the end left out` : ''].filter(Boolean).join(' ');
  const rows: [string, string][] = [
    ['period', `${bounds} (UTC; --since${p.until != null ? ', --until' : ''}): the tables hold only the ${recordings(p.selected)} starting in it, a slice of ${archive}, not the whole archive`],
  ];
  const late = p.late_arrivals;
  if (late) rows.push(['late arrivals', late.count === 0 ? 'none' : `${recordings(late.count)} starting before the period came into the archive since the earlier runs: ${late.reduced ? `reduced for the trends' history only${late.failed ? ` (${late.failed} failed)` : ''}` : 'named, not reduced (a run bounded by --until reduces its period alone)'}; not in these tables (run.json: period.late_arrivals)`]);
  const earlier = (late?.earlier?.count ?? 0) + (late?.earlier?.unlisted ?? 0);
  if (earlier) rows.push(['late arrivals from earlier runs', `${recordings(earlier)} starting before the period that earlier runs found late, in no period's tables yet; not in these tables either (run.json: period.late_arrivals.earlier)`]);
  if (p.quiet_groups) rows.push(['quiet groups', p.quiet_groups.length ? `${p.quiet_groups.map((q) => q.group).join(', ')}: quiet over the period, no recording where one was due (run.json: period.quiet_groups gives each one's latest start)` : 'none']);
  const recomputed = (p.recomputed_for_baselines?.count ?? 0) + (p.recomputed_for_held_changes?.count ?? 0);
  if (recomputed) rows.push(['recomputed for trends', `${recordings(recomputed)} before the period, recomputed for the baselines and changes its verdicts rest on; not in these tables (run.json: period.recomputed_for_baselines, period.recomputed_for_held_changes)`]);
  return rows;
}
