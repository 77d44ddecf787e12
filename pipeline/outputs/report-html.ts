// quality.html: one self-contained page (inline CSS and SVG, no scripts, opens offline) for the morning read.
// The charts (SVG, pipeline/outputs/charts.ts) are drawn here for the channels the page pictures, from the data kept with each result.
import { COLOURS } from './colours.js';
import type { Severity } from '../../stages/quality/flag.js';
import type { QualityReport } from './quality.js';
import type { RecordingResult } from '../reduce/result.js';
import type { Evidence } from '../../stages/quality/evidence.js';

const LABEL: Record<Severity, string> = { ok: 'ok', warn: 'check', fail: 'unusable' };

const esc = (s: unknown) => String(s ?? '').replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
const num = (v: unknown) => (typeof v === 'number' ? (Number.isInteger(v) ? String(v) : v.toPrecision(4)) : v == null ? '—' : String(v));
export const channelId = (recording: string, channel: string) => `ch-${Buffer.from(`${recording}\u0000${channel}`).toString('base64url')}`;

const MAX_PICTURED = 300;

const badge = (s: Severity) => `<span class="sev sev-${s}">${LABEL[s]}</span>`;

/** The channels that need a second look, unusable ones first, and whether each gets pictures (the first MAX_PICTURED). */
function secondLooks(q: QualityReport) {
  const notOk = q.recordings.flatMap((r) => r.channels.filter((x) => x.severity !== 'ok').map((c) => ({ r, c })));
  notOk.sort((a, b) => (a.c.severity === b.c.severity ? 0 : a.c.severity === 'fail' ? -1 : 1));
  return notOk.map((x, i) => ({ ...x, pictured: i < MAX_PICTURED }));
}

/** Draws the pictures of the channels the report shows with pictures, from the data kept with their results (only
 *  those: drawing takes tens of milliseconds a chart, and the charting modules load only if there is one to draw). */
export async function drawPictures(q: QualityReport, results: RecordingResult[]): Promise<void> {
  const byKey = new Map(results.flatMap((r) => r.quality.map((c) => [`${r.recording}\u0000${c.channel}`, c] as const)));
  for (const { r, c, pictured } of secondLooks(q)) {
    const channel = byKey.get(`${r.recording}\u0000${c.channel}`);
    const data = channel?.evidence?.pictures as Evidence | undefined;
    if (!pictured || !data || channel!.evidence!.charts) continue;
    const { evidenceCharts } = await import('./charts.js');
    channel!.evidence!.charts = await evidenceCharts(data, c.unit);
  }
}

export function qualityHtml(q: QualityReport, results: RecordingResult[]): string {
  const chartsOf = new Map(results.flatMap((r) => r.quality.map((c) => [`${r.recording}\u0000${c.channel}`, c.evidence?.charts as string[] | undefined] as const)));
  const channelNames = [...new Set(q.recordings.flatMap((r) => r.channels.map((c) => c.channel)))];
  const t = q.totals;
  const out: string[] = [];
  out.push(`<!doctype html><html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
<title>quern quality — ${esc(q.archive)}</title>
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
table { border-collapse: collapse; background: #fff; }
th, td { border: 1px solid #e2ded3; padding: 4px 8px; text-align: left; vertical-align: top; font-size: 13px; }
th { background: #efece4; font-weight: 600; }
.sev { display: inline-block; padding: 1px 8px; border-radius: 3px; color: #fff; font-size: 12px; font-weight: 600; }
.sev-ok { background: ${COLOURS.ok}; } .sev-warn { background: ${COLOURS.warn}; } .sev-fail { background: ${COLOURS.fail}; }
td.cell { text-align: center; } td.cell a { text-decoration: none; }
section.channel { background: #fff; margin: 16px 0; padding: 12px 16px; border-top: 4px solid; }
section.channel h3 { margin: 0 0 8px; font-size: 15px; }
.charts { display: flex; gap: 12px; flex-wrap: wrap; margin-top: 10px; }
.note { color: #52606d; font-size: 12px; }
</style></head><body>
<header><h1>Data quality of ${esc(q.archive)}</h1><p>quern ${esc(q.version)} · run ${esc(q.run_id)} · ${esc(q.generated)}</p></header><main>`);
  out.push(`<h2>Totals</h2><div class="totals">
<div class="tile" style="border-color:${COLOURS.fail}"><b>${t.channels.fail}</b>channels unusable</div>
<div class="tile" style="border-color:${COLOURS.warn}"><b>${t.channels.warn}</b>channels to check</div>
<div class="tile" style="border-color:${COLOURS.ok}"><b>${t.channels.ok}</b>channels ok</div>
<div class="tile" style="border-color:#1f2933"><b>${t.recordings.unreadable}</b>recordings unreadable</div>
<div class="tile" style="border-color:#7b8794"><b>${t.recordings.unmatched}</b>files unmatched</div></div>
<p class="note">“unusable”: do not use this channel's figures; “check”: usable with the caveat in its message. The numbers support, and do not replace, engineering judgement.</p>`);
  out.push(`<h2>Recordings × channels</h2><table class="overview"><tr><th>recording</th>${channelNames.map((c) => `<th>${esc(c)}</th>`).join('')}</tr>`);
  for (const r of q.recordings) {
    if (r.status === 'failed') { out.push(`<tr><td>${esc(r.recording)}</td><td colspan="${channelNames.length}">${badge('fail')} not readable: ${esc(r.reason)}</td></tr>`); continue; }
    const byName = new Map(r.channels.map((c) => [c.channel, c]));
    out.push(`<tr><td>${esc(r.recording)}</td>${channelNames.map((name) => {
      const c = byName.get(name);
      if (!c) return '<td class="cell"></td>';
      return `<td class="cell">${c.severity === 'ok' ? badge('ok') : `<a href="#${channelId(r.recording, name)}">${badge(c.severity)}</a>`}</td>`;
    }).join('')}</tr>`);
  }
  out.push('</table>');
  out.push('<h2>Channels that need a second look</h2>');
  // Unusable channels first, then those to check; beyond MAX_PICTURED the pictures are left out to keep the page light.
  const notOk = secondLooks(q);
  if (notOk.length > MAX_PICTURED) out.push(`<p class="note">${notOk.length} channels need a second look; pictures are shown for the first ${MAX_PICTURED} (unusable ones first). Every flag of every channel is in quality.json.</p>`);
  for (const { r, c, pictured } of notOk) {
    {
      const charts = chartsOf.get(`${r.recording}\u0000${c.channel}`);
      out.push(`<section class="channel" id="${channelId(r.recording, c.channel)}" data-recording="${esc(r.recording)}" data-channel="${esc(c.channel)}" data-severity="${c.severity}" style="border-color:${COLOURS[c.severity]}">
<h3>${badge(c.severity)} ${esc(r.recording)} · ${esc(c.channel)} <span class="note">(${esc(c.unit)})</span></h3>
<table><tr><th>flag</th><th>verdict</th><th>value</th><th>threshold</th><th>finding and action</th></tr>
${c.flags.filter((f) => f.severity !== 'ok').map((f) => `<tr><td>${esc(f.name)}</td><td>${badge(f.severity)}</td><td>${esc(num(f.value))}</td><td>${esc(f.threshold)}</td><td>${esc(f.message)}</td></tr>`).join('\n')}
</table>`);
      if (charts && pictured) out.push(`<div class="charts">${charts.join('')}</div>`);
      out.push('</section>');
    }
  }
  if (q.unmatched.length) out.push(`<h2>Files no group matches</h2><ul>${q.unmatched.map((u) => `<li>${esc(u)}: add a group for it in archive.yaml, or move it out of the archive</li>`).join('')}</ul>`);
  out.push('</main></body></html>\n');
  return out.join('\n');
}
