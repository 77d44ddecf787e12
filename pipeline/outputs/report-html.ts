// quality.html: one self-contained page (inline CSS and SVG, no scripts, opens offline) for the morning read.
// Made in pieces as the run's recordings arrive (pipeline/outputs/outputs.ts puts them together); the charts arrive as SVG,
// drawn where the channel was reduced (pipeline/outputs/charts.ts).
import { lastCapture, quietWhy, type QuietGroup } from '../select/select.js';
import { brokenGroupLine, type BrokenGroup } from './broken-groups.js';
import { COLOURS } from './colours.js';
import { flagValue } from './flag-value.js';
import { NEEDS_A_LOOK, SEVERITIES, type Flag, type Severity } from '../../stages/quality/flag.js';
import type { QualityChannel, QualityRecording, QualityTotals } from './quality.js';
import { notAssessedLines } from './not-assessed.js';

const LABEL: Record<Severity, string> = { ok: 'ok', note: 'note', warn: 'check', fail: 'unusable' };

const esc = (s: unknown) => String(s ?? '').replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
export const channelId = (recording: string, channel: string) => `ch-${Buffer.from(`${recording}\u0000${channel}`).toString('base64url')}`;

/** Channels pictured at most, unusable ones first; every flag of every channel is in quality.json. */
export const MAX_PICTURED = 300;

const badge = (s: Severity) => `<span class="sev sev-${s}">${LABEL[s]}</span>`;

/** A recording's row of the overview, as compact data until the page's channel columns are known. */
export interface OverviewRow { recording: string; reason?: string; failed: boolean; cells: [string, Severity][] }

export const overviewRow = (r: QualityRecording): OverviewRow => ({ recording: r.recording, failed: r.status === 'failed', ...(r.reason ? { reason: r.reason } : {}), cells: r.channels.map((c) => [c.channel, c.severity]) });

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
<header><h1>${changes ? 'What changed and what to trust' : 'Data quality'}: ${esc(q.archive)}</h1><p>quern ${esc(q.version)} · run ${esc(q.run_id)} · ${esc(q.generated)}</p></header><main>`);
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
  const byName = new Map(r.cells);
  return `<tr><td>${esc(r.recording)}</td>${channelNames.map((name) => {
    const sev = byName.get(name);
    if (!sev) return '<td class="cell"></td>';
    return `<td class="cell">${NEEDS_A_LOOK.has(sev) ? `<a href="#${channelId(r.recording, name)}">${badge(sev)}</a>` : badge(sev)}</td>`;
  }).join('')}</tr>`;
}

export const sectionsHead = (notOk: number, fresh = 0) => ['</table>', '<h2>Channels that need a second look</h2>', ...(notOk === 0 ? ['<p class="steady">None: every channel read is ok or has notes only.</p>'] : [`<p class="note">${fresh ? `<b>${fresh}</b> ${fresh === 1 ? 'channel has' : 'channels have'} a flag new in this run (not reported at that verdict by the previous run into this output folder), marked “new” and listed first; then` : 'In order:'} unusable before to check, the newest recording first.</p>`]),
  ...(notOk > MAX_PICTURED ? [`<p class="note">${notOk} channels need a second look; pictures are shown for the first ${MAX_PICTURED} in this order. Every flag of every channel is in quality.json.</p>`] : [])].join('\n');

/** A channel's section up to its pictures: the flags that are not ok, each with value, threshold and message; `fresh`: a flag is new in this run. */
export const channelSection = (recording: string, c: QualityChannel, fresh = false) => `<section class="channel" id="${channelId(recording, c.channel)}" data-recording="${esc(recording)}" data-channel="${esc(c.channel)}" data-severity="${c.severity}"${fresh ? ' data-new="true"' : ''} style="border-color:${COLOURS[c.severity]}">
<h3>${badge(c.severity)}${fresh ? ' <b>new</b>' : ''} ${esc(recording)} · ${esc(c.channel)} <span class="note">(${esc(c.unit)})</span></h3>
<table><tr><th>flag</th><th>verdict</th><th>value</th><th>threshold</th><th>finding and action</th></tr>
${c.flags.filter((f) => f.severity !== 'ok').sort((a, b) => SEVERITIES.indexOf(b.severity) - SEVERITIES.indexOf(a.severity)).map((f) => `<tr${f.new ? ' data-new="true"' : ''}><td>${esc(f.name)}${f.new ? ' <b>new</b>' : ''}</td><td>${badge(f.severity)}</td><td>${esc(flagValue(f))}</td><td>${esc(f.threshold)}</td><td>${esc(f.message)}</td></tr>`).join('\n')}
</table>`;

export const sectionEnd = (charts: string[] | null) => `${charts ? `<div class="charts">${charts.join('')}</div>\n` : ''}</section>`;

/** Findings worth knowing on channels otherwise ok: one table row each, under a heading once the first arrives. */
export const notesHead = () => `<h2>Notes</h2><p class="note">Findings worth knowing on channels otherwise ok; no figure is at risk beyond the tolerance in the threshold.</p><table class="notes"><tr><th>recording</th><th>channel</th><th>flag</th><th>finding</th></tr>`;
export const noteLine = (recording: string, channel: string, f: Flag) => `<tr><td>${esc(recording)}</td><td>${esc(channel)}</td><td>${esc(f.name)}</td><td>${esc(f.message)}</td></tr>`;
export const notesEnd = () => '</table>';

export const pageEnd = (unmatched: string[], quiet: QuietGroup[] = [], broken: BrokenGroup[] = []) =>
  `${broken.length ? `<h2>Groups whose declaration is broken</h2><ul>${broken.map((b) => `<li>${esc(brokenGroupLine(b))}</li>`).join('')}</ul>\n` : ''}`
  + `${quiet.length ? `<h2>Groups that fell quiet</h2><ul>${quiet.map((g) => `<li>${esc(g.group)}: ${quietWhy({ ...g, capture_every: g.capture_every && esc(g.capture_every) }, 'this run\'s period')}; ${esc(lastCapture(g))}</li>`).join('')}</ul>\n` : ''}`
  + `${unmatched.length ? `<h2>Files no group matches</h2><ul>${unmatched.map((u) => `<li>${esc(u)}: add a group for it in archive.yaml, or move it out of the archive</li>`).join('')}</ul>\n` : ''}</main></body></html>\n`;
