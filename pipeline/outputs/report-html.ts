// quality.html: one self-contained page (inline CSS and SVG, no scripts, opens offline) for the morning read.
// Made in pieces as the run's recordings arrive (pipeline/outputs/outputs.ts puts them together); the charts arrive as SVG,
// drawn where the channel was reduced (pipeline/outputs/charts.ts).
import { lastCapture, quietWhy, type QuietGroup } from '../select/select.js';
import { brokenGroupLine, type BrokenGroup } from './broken-groups.js';
import { COLOURS } from './colours.js';
import { flagValue } from './flag-value.js';
import { NEEDS_A_LOOK, SEVERITIES, type Flag, type Severity } from '../../stages/quality/flag.js';
import type { QualityChannel, QualityFlag, QualityRecording, QualityTotals } from './quality.js';
import { foldCount, foldNew, foldSeverity, type FlagFold, type FoldRow } from './flag-folds.js';
import { notAssessedLines } from './not-assessed.js';

const LABEL: Record<Severity, string> = { ok: 'ok', note: 'note', warn: 'check', fail: 'unusable' };

const esc = (s: unknown) => String(s ?? '').replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
/** The anchor of a channel's flag's entry, which the overview's cells link to. */
export const foldId = (group: string, channel: string, flag: string) => `fold-${Buffer.from(`${group}\u0000${channel}\u0000${flag}`).toString('base64url')}`;

/** Channels pictured at most, unusable ones first; every flag of every channel is in quality.json. */
export const MAX_PICTURED = 300;

const badge = (s: Severity) => `<span class="sev sev-${s}">${LABEL[s]}</span>`;

/**
 * A recording's row of the overview, as compact data until the page's channel columns are known: each channel's verdict,
 * and for one to look at, its worst flag, whose entry the cell links to.
 */
export interface OverviewRow { recording: string; group?: string; reason?: string; failed: boolean; cells: ([string, Severity] | [string, Severity, string])[] }

const worstFlag = (c: QualityChannel) => c.flags.reduce((w, f) => (SEVERITIES.indexOf(f.severity) > SEVERITIES.indexOf(w.severity) ? f : w)).name;

export const overviewRow = (r: QualityRecording): OverviewRow => ({
  recording: r.recording, group: r.group, failed: r.status === 'failed', ...(r.reason ? { reason: r.reason } : {}),
  cells: r.channels.map((c) => (NEEDS_A_LOOK.has(c.severity) && c.flags.length ? [c.channel, c.severity, worstFlag(c)] : [c.channel, c.severity])),
});

/**
 * Whose page this is: a later run that finds nothing changed leaves it in place, so its marks “new” are told as its own
 * run's, with that run's date, not as the latest run's.
 */
export const writtenBy = (q: { run_id: string; generated: string }) =>
  `Written by run ${esc(q.run_id)} at ${esc(q.generated)}. “new” marks what that run found and the run before it into this output folder had not reported; a later run that finds nothing changed leaves this page as it is (its run.json names this run under outputs.written_by_run) and tells its own news on its terminal.`;

/** The page's head and totals; `changes`, the rendered "what changed" section, opens the page when trends are on. */
export function pageHead(q: { archive: string; version: string; run_id: string; generated: string }, t: QualityTotals, changes = ''): string {
  const out: string[] = [];
  out.push(`<!doctype html><html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
<title>quern — ${esc(q.archive)}</title>
<style>
body { font: 14px/1.45 Helvetica, Arial, sans-serif; color: #1f2933; margin: 0; background: #f7f6f2; }
header { background: #1f2933; color: #f7f6f2; padding: 16px 24px; }
header h1 { margin: 0 0 4px; font-size: 20px; font-weight: 600; }
header p { margin: 0; opacity: .8; font-size: 12px; }
main { padding: 16px 24px 48px; }
h2 { font-size: 16px; margin: 28px 0 8px; border-bottom: 2px solid #d8d4c8; padding-bottom: 4px; }
.totals { display: flex; gap: 12px; flex-wrap: wrap; }
.tile { background: #fff; border-left: 6px solid; padding: 8px 14px; min-width: 120px; }
.tile b { display: block; font-size: 22px; }
/* A wide table scrolls inside the page on a narrow screen rather than pushing the page sideways. */
table { border-collapse: collapse; background: #fff; display: block; max-width: 100%; overflow-x: auto; }
.charts svg { max-width: 100%; height: auto; }
th, td { border: 1px solid #e2ded3; padding: 4px 8px; text-align: left; vertical-align: top; font-size: 13px; }
th { background: #efece4; font-weight: 600; }
.sev { display: inline-block; padding: 1px 8px; border-radius: 3px; color: #fff; font-size: 12px; font-weight: 600; }
.sev-ok { background: ${COLOURS.ok}; } .sev-note { background: ${COLOURS.note}; } .sev-warn { background: ${COLOURS.warn}; } .sev-fail { background: ${COLOURS.fail}; }
td.cell { text-align: center; } td.cell a { text-decoration: none; }
section.channel, section.change-channel { background: #fff; margin: 16px 0; padding: 12px 16px; border-top: 4px solid; }
section.channel h3, section.change-channel h3 { margin: 0 0 8px; font-size: 15px; }
section.change-channel ul { margin: 4px 0; padding-left: 20px; font-size: 13px; }
p.key { font-size: 12px; color: #52606d; margin: 6px 0 0; }
p.key svg.marker { vertical-align: -1px; }
p.steady { background: #fff; border-left: 6px solid ${COLOURS.ok}; padding: 8px 14px; }
p.unjudged { background: #fff; border-left: 6px solid ${COLOURS.note}; padding: 8px 14px; }
.charts { display: flex; gap: 12px; flex-wrap: wrap; margin-top: 10px; }
.note { color: #52606d; font-size: 12px; }
</style></head><body>
<header><h1>${changes ? 'What changed and what to trust' : 'Data quality'}: ${esc(q.archive)}</h1><p>quern ${esc(q.version)} · run ${esc(q.run_id)} · ${esc(q.generated)}</p>
<p class="written" data-run="${esc(q.run_id)}">${writtenBy(q)}</p></header><main>`);
  if (changes) out.push(changes);
  out.push(`<h2>${changes ? 'Data quality: totals' : 'Totals'}</h2><div class="totals">
<div class="tile" style="border-color:${COLOURS.fail}"><b>${t.channels.fail}</b>channels unusable</div>
<div class="tile" style="border-color:${COLOURS.warn}"><b>${t.channels.warn}</b>channels to check</div>
<div class="tile" style="border-color:${COLOURS.note}"><b>${t.channels.note}</b>channels with notes</div>
<div class="tile" style="border-color:${COLOURS.ok}"><b>${t.channels.ok}</b>channels ok</div>
<div class="tile" style="border-color:#1f2933"><b>${t.recordings.unreadable}</b>${t.recordings.unreadable === 1 ? 'recording' : 'recordings'} unreadable</div>
<div class="tile" style="border-color:#7b8794"><b>${t.recordings.unmatched}</b>${t.recordings.unmatched === 1 ? 'file' : 'files'} unmatched</div></div>
${notAssessedLines(t.not_assessed).map((l) => `<p class="unjudged">Not checked: ${esc(l)}. These channels read ok on that flag only because it could not be judged.</p>`).join('\n')}
<p class="note">“unusable”: do not use this channel's figures; “check”: a figure may be off by more than about 5 %, named in its message; “note”: worth knowing, no figure at risk beyond that. The numbers support, and do not replace, engineering judgement.</p>`);
  return out.join('\n');
}

export const overviewHead = (channelNames: string[]) => `<h2>Recordings × channels</h2><table class="overview"><tr><th>recording</th>${channelNames.map((c) => `<th>${esc(c)}</th>`).join('')}</tr>`;

export function overviewLine(r: OverviewRow, channelNames: string[]): string {
  if (r.failed) return `<tr><td>${esc(r.recording)}</td><td colspan="${channelNames.length}">${badge('fail')} not readable: ${esc(r.reason)}</td></tr>`;
  const byName = new Map(r.cells.map(([c, sev]) => [c, sev])), flags = new Map(r.cells.map(([c, , flag]) => [c, flag]));
  return `<tr><td>${esc(r.recording)}</td>${channelNames.map((name) => {
    const sev = byName.get(name);
    if (!sev) return '<td class="cell"></td>';
    return `<td class="cell">${NEEDS_A_LOOK.has(sev) && flags.get(name) ? `<a href="#${foldId(r.group ?? '', name, flags.get(name)!)}">${badge(sev)}</a>` : badge(sev)}</td>`;
  }).join('')}</tr>`;
}

export const sectionsHead = (entries: number, fresh = 0, pictured = 0) => ['</table>', '<h2>Channels that need a second look</h2>', ...(entries === 0 ? ['<p class="steady">None: every channel read is ok or has notes only.</p>'] : [`<p class="note">One entry per channel and flag, over this page's recordings: in how many it was raised, the latest with its finding, and the others listed under it. ${fresh ? `<b>${fresh}</b> ${fresh === 1 ? 'entry holds' : 'entries hold'} a flag new in this page's run (not reported at that verdict by the run before it into this output folder), marked “new” and listed first; then` : 'In order:'} unusable before to check, the newest latest recording first.</p>`]),
  ...(pictured >= MAX_PICTURED ? [`<p class="note">Pictures are shown for the first ${MAX_PICTURED} channels in this order, each with its latest recording. Every flag of every channel is in quality.json.</p>`] : [])].join('\n');

/** A recording's row of an entry: the recording, its verdict, value, threshold and message (made in the worker). */
export const foldCells = (recording: string, f: QualityFlag) => `<td>${esc(recording)}</td><td>${badge(f.severity)}${f.new ? ' <b>new</b>' : ''}</td><td>${esc(flagValue(f))}</td><td>${esc(f.threshold)}</td><td>${esc(f.message)}</td>`;

const ROWS_HEAD = '<tr><th>recording</th><th>verdict</th><th>value</th><th>threshold</th><th>finding and action</th></tr>';

/**
 * A channel's flag over the page's recordings, up to its pictures: the count, the latest recording's row, and every
 * other kept row in a collapsed list (the earliest counted past FOLD_ROWS). `of`: the channel's recordings in the run.
 */
export function foldEntry(f: FlagFold, of: number): string {
  const sev = foldSeverity(f), fresh = foldNew(f), n = foldCount(f), [latest, ...earlier] = f.rows;
  const counted = f.failed && f.warned ? `unusable in ${f.failed} and to check in ${f.warned} of ${of}` : `in ${n} of ${of}`;
  const rows = (xs: FoldRow[]) => xs.map((r) => `<tr data-recording="${esc(r.recording)}"${r.new ? ' data-new="true"' : ''}>${r.cells}</tr>`).join('\n');
  const untold = n - f.rows.length;
  return `<section class="channel" id="${foldId(f.group, f.channel, f.flag)}" data-group="${esc(f.group)}" data-channel="${esc(f.channel)}" data-flag="${esc(f.flag)}" data-recording="${esc(latest.recording)}" data-severity="${sev}" data-count="${n}" data-of="${of}"${fresh ? ' data-new="true"' : ''} style="border-color:${COLOURS[sev]}">
<h3>${badge(sev)}${fresh ? ' <b>new</b>' : ''} ${esc(f.group)} · ${esc(f.channel)} <span class="note">(${esc(f.unit)})</span>: ${esc(f.flag)} <span class="count">${counted} ${of === 1 ? 'recording' : 'recordings'}</span></h3>
<table class="latest">${ROWS_HEAD}
${rows([latest])}
</table>${earlier.length || untold > 0 ? `
<details><summary>${n - 1} earlier ${n - 1 === 1 ? 'recording' : 'recordings'} with this flag</summary><table class="earlier">${ROWS_HEAD}
${rows(earlier)}
</table>${untold > 0 ? `<p class="note" data-untold="${untold}">and ${untold} earlier: every one is in the overview above and in quality.json.</p>` : ''}</details>` : ''}`;
}

/** An entry's pictures, or where they are: its latest recording's channel pictured under an earlier entry of that channel. */
export const picturedAbove = (g: FlagFold) => `<p class="note">Pictures of this recording's channel: under <a href="#${foldId(g.group, g.channel, g.flag)}">${esc(g.flag)}</a> above.</p>`;

export const sectionEnd = (charts: string[] | null, above = '') => `${charts ? `<div class="charts">${charts.join('')}</div>\n` : above ? `${above}\n` : ''}</section>`;

/** Findings worth knowing on channels otherwise ok: one table row each, under a heading once the first arrives. */
export const notesHead = () => `<h2>Notes</h2><p class="note">Findings worth knowing on channels otherwise ok; no figure is at risk beyond the tolerance in the threshold.</p><table class="notes"><tr><th>recording</th><th>channel</th><th>flag</th><th>finding</th></tr>`;
export const noteLine = (recording: string, channel: string, f: Flag) => `<tr><td>${esc(recording)}</td><td>${esc(channel)}</td><td>${esc(f.name)}</td><td>${esc(f.message)}</td></tr>`;
export const notesEnd = () => '</table>';

export const pageEnd = (unmatched: string[], quiet: QuietGroup[] = [], broken: BrokenGroup[] = []) =>
  `${broken.length ? `<h2>Groups whose declaration is broken</h2><ul>${broken.map((b) => `<li>${esc(brokenGroupLine(b))}</li>`).join('')}</ul>\n` : ''}`
  + `${quiet.length ? `<h2>Groups that fell quiet</h2><ul>${quiet.map((g) => `<li>${esc(g.group)}: ${quietWhy({ ...g, capture_every: g.capture_every && esc(g.capture_every) }, 'this run\'s period')}; ${esc(lastCapture(g))}</li>`).join('')}</ul>\n` : ''}`
  + `${unmatched.length ? `<h2>Files no group matches</h2><ul>${unmatched.map((u) => `<li>${esc(u)}: add a group for it in archive.yaml, or move it out of the archive</li>`).join('')}</ul>\n` : ''}</main></body></html>\n`;
