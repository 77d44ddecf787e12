// quality.html's opening section, "what changed": the channel features that moved against their baseline, each channel with its
// features' histories (baseline band and limits), the latest spectrum over the baseline's, and its spectra across the recordings.
import type { TopLevelSpec } from 'vega-lite';
import type { ChangeItem, ChangesReport } from '../trends/changes.js';
import { MAX_RECORDINGS, type ChannelPictures, type Spectrum, type TrendPicture } from '../trends/pictures.js';
import { bandCentre, logBands } from '../trends/log-bands.js';
import { changeLine, latestCounts } from '../trends/summary.js';
import { COLOURS, LEVEL_RAMP } from './colours.js';
import { frequencyScale, NO_DC } from './frequency-axis.js';
import { MARKER_SHAPES, MARKER_SIZES, markerGlyph, markerOf, type Marker } from './trend-markers.js';
import { AXIS_LABELS, plainNumber } from './plain-number.js';
import { densityUnit } from './density-unit.js';

// Verdict colours from the report's palette; a recording without a verdict (baseline forming, data unusable) in grey.
const VERDICT_COLOURS = { steady: COLOURS.ok, changed: COLOURS.warn, alarm: COLOURS.fail, 'no verdict': '#9aa5b1' } as const;
/** Bands per spectrogram column, so a picture of 40 recordings stays a few thousand rectangles. */
const SPECTROGRAM_BANDS = 80;

const esc = (s: unknown) => String(s ?? '').replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
const num = (v: number | null) => (v == null ? '—' : plainNumber(v));
// A value that rounds to zero carries no sign.
const signed = (v: number | null, digits = 1) => {
  if (v == null) return '—';
  const text = Math.abs(v).toFixed(digits);
  return Number(text) === 0 ? text : `${v > 0 ? '+' : '−'}${text}`;
};
const day = (t: string | null, recording: string) => (t ? t.slice(0, 16).replace('T', ' ') : recording);
const positive = (d: number) => (d > 0 ? d : null);

const base = { config: { font: 'Helvetica, Arial, sans-serif', axis: { labelFontSize: 10, titleFontSize: 11 }, axisQuantitative: { labelExpr: AXIS_LABELS }, view: { stroke: '#ccc' }, legend: { labelFontSize: 10, titleFontSize: 10 } } } as const;

/** Time axis: dates for histories of up to two months, Vega's own choice beyond. */
function timeAxis(points: { t: number }[]) {
  const days = points.length ? (points[points.length - 1].t - points[0].t) / 86_400_000 : 0;
  return days > 1 && days <= 60 ? { format: '%d %b', tickCount: { interval: 'day' as const, step: Math.max(1, Math.ceil(days / 8)) } } : {};
}

/** A feature's history against its baseline's band, median and limits. */
export function trendSpec(t: TrendPicture): TopLevelSpec {
  // The scale follows the usable recordings, the band and the limits; a recording whose data fail the checks sits at its edge.
  const usableValues = t.points.filter((p) => p.usable).map((p) => p.value);
  const span = [...(usableValues.length ? usableValues : t.points.map((p) => p.value)), ...(t.band ?? []), ...Object.values(t.limits ?? {}) as number[]];
  let lo = Infinity, hi = -Infinity;
  for (const v of span) { if (v < lo) lo = v; if (v > hi) hi = v; }
  const pad = 0.08 * (hi - lo || Math.abs(hi) || 1);
  const domain = [lo - pad, hi + pad];
  const clamp = (v: number) => Math.min(domain[1], Math.max(domain[0], v));
  const points = t.points.map((p) => ({
    t: p.t, value: p.usable ? p.value : clamp(p.value), verdict: p.usable ? p.verdict ?? 'no verdict' : 'data unusable',
    marker: markerOf(p), size: MARKER_SIZES[markerOf(p)],
  }));
  const limits = Object.entries(t.limits ?? {}).map(([what, v]) => ({ v, what: `${what} limit` }));
  const unit = t.unit === '1' ? '' : ` (${t.unit})`;
  // After a restarted baseline, its median and band span the recordings from the restart on, not the whole history.
  const lastT = t.points.length ? t.points[t.points.length - 1].t : 0;
  const since = t.restartedAt != null ? { from: t.restartedAt, to: Math.max(lastT, t.restartedAt) } : {};
  const sinceX = t.restartedAt != null ? { x: { field: 'from', type: 'temporal' as const }, x2: { field: 'to' } } : {};
  const y = { field: 'value', type: 'quantitative' as const, title: t.feature, scale: { domain, zero: false, nice: false } };
  return {
    // A baseline below its measurable floor has no level to change from: the shading starts below and says so.
    ...base, width: 330, height: 170, title: { text: `${t.feature}${unit} over time`, ...(t.floor != null && t.band ? { subtitle: `baseline below its floor ${plainNumber(t.floor)}: steady up to ${plainNumber(t.band[1])}` } : {}), fontSize: 12 },
    layer: [
      ...(t.band ? [{ data: { values: [{ lo: t.band[0], hi: t.band[1], ...since }] }, mark: { type: 'rect' as const, color: COLOURS.ok, opacity: 0.12, clip: true }, encoding: { y: { field: 'lo', type: 'quantitative' as const, scale: { domain, nice: false } }, y2: { field: 'hi' }, ...sinceX } }] : []),
      ...(t.median != null ? [{ data: { values: [{ m: t.median, ...since }] }, mark: { type: 'rule' as const, color: COLOURS.ok, strokeDash: [4, 3] }, encoding: { y: { field: 'm', type: 'quantitative' as const }, ...sinceX } }] : []),
      // Where the baseline was formed again: a vertical line.
      ...(t.restartedAt != null ? [{ data: { values: [{ at: t.restartedAt }] }, mark: { type: 'rule' as const, color: '#52606d', strokeWidth: 1.5 }, encoding: { x: { field: 'at', type: 'temporal' as const } } }] : []),
      // The limits, dashed for warn and solid for alarm, each named on its line: told apart without colour.
      ...(limits.length ? [
        { data: { values: limits }, mark: { type: 'rule' as const, strokeWidth: 1.5 }, encoding: { y: { field: 'v', type: 'quantitative' as const }, color: { field: 'what', type: 'nominal' as const, scale: { domain: ['warn limit', 'alarm limit'], range: [COLOURS.warn, COLOURS.fail] }, legend: null }, strokeDash: { field: 'what', type: 'nominal' as const, scale: { domain: ['warn limit', 'alarm limit'], range: [[5, 3], [1, 0]] }, legend: null } } },
        { data: { values: limits }, mark: { type: 'text' as const, align: 'left' as const, baseline: 'bottom' as const, dx: 3, dy: -2, fontSize: 9 }, encoding: { x: { value: 0 }, y: { field: 'v', type: 'quantitative' as const }, text: { field: 'what', type: 'nominal' as const }, color: { field: 'what', type: 'nominal' as const, legend: null } } },
      ] : []),
      { data: { values: points.filter((p) => p.marker !== 'off the scale') }, mark: { type: 'line', color: '#4a5d7a', strokeWidth: 1 }, encoding: { x: { field: 't', type: 'temporal', title: 'start time', axis: timeAxis(points) }, y } },
      {
        data: { values: points }, mark: { type: 'point', filled: true },
        encoding: {
          x: { field: 't', type: 'temporal' }, y,
          color: { field: 'verdict', type: 'nominal', scale: { domain: [...Object.keys(VERDICT_COLOURS), 'data unusable'], range: [...Object.values(VERDICT_COLOURS), COLOURS.fail] }, legend: null },
          size: { field: 'size', type: 'quantitative', scale: null, legend: null },
          shape: { field: 'marker', type: 'nominal', scale: { domain: Object.keys(MARKER_SHAPES), range: Object.values(MARKER_SHAPES) }, legend: null },
          tooltip: [{ field: 't', type: 'temporal', title: 'start' }, { field: 'value', type: 'quantitative' }],
        },
      },
    ],
    resolve: { scale: { color: 'independent' } },
  };
}

function spectrumSpec(s: NonNullable<ChannelPictures['spectrum']>, unit: string, latestLabel: string): TopLevelSpec {
  const rows = (sp: Spectrum, what: string) => Array.from(sp.density, (d, k) => ({ f: bandCentre(sp, k), d: positive(d), what })).filter((p) => p.d != null);
  const baselineLabel = `baseline (median of ${s.baselineCount})`;
  const values = [...(s.baseline ? rows(s.baseline, baselineLabel) : []), ...rows(s.latest, latestLabel)];
  const n = s.latest.density.length, lo = bandCentre(s.latest, 0), hi = bandCentre(s.latest, n - 1);
  return {
    ...base, width: 330, height: 170, title: { text: 'Latest spectrum over the baseline\'s', subtitle: NO_DC, fontSize: 12 },
    data: { values },
    mark: { type: 'line', strokeWidth: 1 },
    encoding: {
      x: { field: 'f', type: 'quantitative', ...frequencyScale(lo, Math.max(hi, lo * 2)) }, y: { field: 'd', type: 'quantitative', title: densityUnit(unit), scale: { type: 'log' }, axis: { format: '.0e', tickCount: 6, labelOverlap: 'greedy' } },
      // Told apart by dash as well as colour, so the picture reads in greyscale.
      color: { field: 'what', type: 'nominal', scale: { domain: [baselineLabel, latestLabel], range: [COLOURS.ok, COLOURS.fail] }, legend: { orient: 'bottom', title: null, labelLimit: 260 } },
      strokeDash: { field: 'what', type: 'nominal', scale: { domain: [baselineLabel, latestLabel], range: [[4, 2], [1, 0]] }, legend: { orient: 'bottom', title: null, labelLimit: 260 } },
    },
  };
}

function spectrogramSpec(columns: ChannelPictures['spectrogram'], unit: string): TopLevelSpec {
  let lo = Infinity, hi = -Infinity;
  // One column a recording: two starting in the same minute keep columns of their own.
  const seen = new Map<string, number>();
  const cells = columns.flatMap((c) => {
    const minute = new Date(c.t).toISOString().slice(0, 16).replace('T', ' ');
    const k = (seen.get(minute) ?? 0) + 1;
    seen.set(minute, k);
    const label = k === 1 ? minute : `${minute} (${k})`;
    const s = logBands(c.spectrum.edges, c.spectrum.density, SPECTROGRAM_BANDS);
    if (s.density.length) { lo = Math.min(lo, s.edges[0]); hi = Math.max(hi, s.edges[s.density.length]); }
    return Array.from(s.density, (d, k) => ({ night: label, f0: s.edges[k], f1: s.edges[k + 1], level: 10 * Math.log10(Math.max(d, 1e-30)) }));
  });
  let loudest = -Infinity;
  for (const c of cells) if (c.level > loudest) loudest = c.level;
  const floor = loudest - 80; // 80 dB of colour: quieter bins share the palest shade
  return {
    ...base, width: Math.max(160, Math.min(330, 40 * columns.length)), height: 170, title: { text: 'Spectra across recordings', subtitle: [`the latest ${columns.length} usable ${columns.length === 1 ? 'recording' : 'recordings'}${columns.length >= MAX_RECORDINGS ? ` (at most ${MAX_RECORDINGS})` : ''}`, NO_DC], fontSize: 12 },
    data: { values: cells.map((c) => ({ ...c, level: Math.max(c.level, floor) })) },
    mark: { type: 'rect' },
    encoding: {
      // Labels that would overlap are thinned, so a long history stays readable.
      x: { field: 'night', type: 'ordinal', title: null, axis: { labelAngle: -45, labelOverlap: 'greedy', labelSeparation: 2 } },
      y: { field: 'f0', type: 'quantitative', ...frequencyScale(lo, Math.max(hi, lo * 2)) }, y2: { field: 'f1' },
      // Interpolated in CIELAB, so lightness falls straight from the quietest level to the loudest.
      color: { field: 'level', type: 'quantitative', title: `dB re 1 ${densityUnit(unit)}`, scale: { range: [...LEVEL_RAMP], interpolate: 'lab' }, legend: { orient: 'right', gradientLength: 120 } },
    },
  };
}

// The trend pictures' key, once per channel instead of a legend in every picture; shape and colour both name the verdict.
const GREY = '#52606d';
const VERDICT_MARKERS: Record<keyof typeof VERDICT_COLOURS, Marker> = { steady: 'later', changed: 'changed', alarm: 'alarm', 'no verdict': 'later' };
const KEY = `<p class="key">shape: ${markerGlyph('baseline', GREY)} baseline recording · ${markerGlyph('later', GREY)} later recording · ${markerGlyph('changed', COLOURS.warn)} changed · ${markerGlyph('alarm', COLOURS.fail)} alarm · ${markerGlyph('off the scale', COLOURS.fail)} data unusable (placed at the edge) · colour: ${Object.entries(VERDICT_COLOURS).map(([v, c]) => `${markerGlyph(VERDICT_MARKERS[v as keyof typeof VERDICT_COLOURS], c)} ${v}`).join(' ')} · shaded: values that read steady (from below, where the baseline lies below its measurable floor) · dashed: baseline median · vertical line: baseline formed again</p>`;

const badge = (v: 'changed' | 'alarm') => `<span class="sev sev-${v === 'alarm' ? 'fail' : 'warn'}">${v}</span>`;

function row(c: ChangeItem): string {
  const unit = c.unit === '1' ? '' : ` ${esc(c.unit)}`;
  return `<tr data-feature="${esc(c.feature)}"${c.new ? ' data-new="true"' : ''}><td>${badge(c.verdict)}${c.held ? ' held' : ''}${c.new ? ' <b>new</b>' : ''}</td><td>${esc(c.group)}</td><td>${esc(c.channel)}</td><td>${esc(c.feature)}</td><td>${num(c.value)}${unit}${c.failed_after ? `<br><span class="note" data-failed-after="true">latest usable; ${esc(day(c.failed_after.start_time, c.failed_after.recording))}'s recording failed: ${esc(c.failed_after.flags.join(', '))}</span>` : ''}</td><td>${c.floor?.below === 'baseline' ? `below ${num(c.floor.level)}${unit} (floor)` : `${num(c.baseline)}${c.baseline != null ? unit : ''}`}</td><td>${c.floor && c.change_db != null ? (c.change_db > 0 ? '≥ ' : '≤ ') : ''}${signed(c.change_db)}</td><td>${signed(c.score, 1)}</td><td>${esc(day(c.start_time, c.recording))}</td><td>${esc(day(c.since.start_time, c.since.recording))}</td></tr>`;
}

/**
 * Each pictured channel's part of the section, charts rendered to SVG: drawn once for a history, and kept with the trends,
 * since the table above them (changesSection) marks what is new in each run.
 */
export async function picturesHtml(r: ChangesReport, pictures: ChannelPictures[]): Promise<string> {
  if (!r.items.length) return '';
  // The charting modules load only when a channel's pictures are drawn.
  const { svg } = pictures.length ? await import('./charts.js') : { svg: async () => '' };
  const out: string[] = [];
  for (const p of pictures) {
    const worst = p.items.some((c) => c.verdict === 'alarm') ? 'alarm' : 'changed';
    const latestLabel = `latest (${day(p.items[0].start_time, p.items[0].recording)})`;
    const charts = await Promise.all([
      ...p.trends.map((t) => svg(trendSpec(t))),
      ...(p.spectrum ? [svg(spectrumSpec(p.spectrum, p.unit, latestLabel))] : []),
      ...(p.spectrogram.length ? [svg(spectrogramSpec(p.spectrogram, p.unit))] : []),
    ]);
    out.push(`<section class="change-channel" data-group="${esc(p.group)}" data-channel="${esc(p.channel)}" data-verdict="${worst}" style="border-color:${worst === 'alarm' ? COLOURS.fail : COLOURS.warn}">
<h3>${badge(worst)} ${esc(p.group)} · ${esc(p.channel)} <span class="note">(${esc(p.unit)})</span></h3>
<ul>${p.items.map((c) => `<li>${esc(changeLine(c))}</li>`).join('')}</ul>
${KEY}
<div class="charts">${charts.join('')}</div></section>`);
  }
  if (pictures.length < new Set(r.items.map((c) => `${c.group}\u0000${c.channel}`)).size) out.push(`<p class="note">Pictures are shown for the ${pictures.length} channels with the strongest changes; every change is in the table above, quality.json and trends.parquet.</p>`);
  return out.join('\n');
}

/** How many items are new, as the section's count says it; empty before the news are marked. */
function newsText(r: ChangesReport): string {
  if (!r.news) return '';
  if (!r.news.compared) return '; all new: no earlier report of this output folder is kept to compare with';
  return r.news.new ? `; <b>${r.news.new}</b> new (not reported at that verdict by the previous run), marked “new” and listed after any alarms` : '; none new: the previous run reported each of them';
}

/** Channels named at most in the list of baselines that cannot form by waiting; quality.json names every one. */
export const MAX_BLOCKED_LISTED = 50;

/**
 * The unformed baselines that recordings to come will not form by themselves (their places hold recordings that fail the
 * data-quality checks, are left out or lack the feature; a baseline period without usable recordings): not those that
 * only wait for more nights (`forming_baselines`).
 */
export function blockedBaselines(r: ChangesReport): NonNullable<ChangesReport['unformed_baselines']> {
  const waiting = new Set((r.forming_baselines ?? []).flatMap((g) => g.unformed_entries));
  return (r.unformed_baselines ?? []).filter((_, i) => !waiting.has(i));
}

/** The channels without a baseline that waiting alone will not form, each with its features and why; empty when none. */
function blockedList(blocked: NonNullable<ChangesReport['unformed_baselines']>): string {
  if (!blocked.length) return '';
  const more = blocked.length - MAX_BLOCKED_LISTED;
  return `<div class="unformed"><p class="unjudged">${blocked.length} ${blocked.length === 1 ? 'channel has' : 'channels have'} no baseline, and not only for want of nights, so ${blocked.length === 1 ? 'its features get' : 'their features get'} no change verdict:</p>
<ul>${blocked.slice(0, MAX_BLOCKED_LISTED).map((u) => `<li data-group="${esc(u.group)}" data-channel="${esc(u.channel)}">${esc(u.group)} · ${esc(u.channel)} (${esc(u.features.join(', '))}): ${esc(u.why)}</li>`).join('')}</ul>${more > 0 ? `\n<p class="note">…and ${more} more in quality.json (changes.unformed_baselines).</p>` : ''}</div>`;
}

/** The section around the pictures drawn by picturesHtml: the count, the table (new items marked in words), the pictures. */
export function changesSection(r: ChangesReport, pictured: string): string {
  const alarms = r.items.filter((c) => c.verdict === 'alarm').length;
  const out: string[] = [`<section class="changes" id="what-changed"><h2>What changed</h2>`];
  out.push(`<p class="note">Each watched feature (${esc(r.features.join(', '))}) against ${esc(r.baseline)}. Changed: beyond ±${r.thresholds.change_db} dB or a robust score beyond ±${r.thresholds.score} (1.4826 × MAD, at least ${r.thresholds.spread_floor * 100} % of the median), or at a warn limit; alarm: at an alarm limit${r.thresholds.deadband ? `; either clears once the value is back inside its threshold by ${r.thresholds.deadband * 100} % of it (deadband; marked “held” until then)` : ''}. Channels whose data fail the quality checks are left out.</p>`);
  // Each channel feature counted once, by what it reads at the end of the run, as the table's items are.
  const l = latestCounts(r);
  const blocked = blockedBaselines(r);
  if (!r.items.length) {
    // All clear only where most features have a verdict and every baseline forms by waiting: otherwise the page says so
    // without the calm colour, naming the channels that cannot be judged.
    const unjudged = l.unscored > l.steady || blocked.length > 0;
    out.push(unjudged
      ? `<p class="unjudged">No change found, but only ${l.steady} channel features of this run have a verdict (steady); ${l.unscored} have none (${blocked.length ? `${blocked.length} ${blocked.length === 1 ? 'channel has' : 'channels have'} no baseline, and not only for want of nights: named below` : 'baseline forming, held by figures of other spec options, or data unusable'}): see the channels that need a second look further down.</p>`
      : `<p class="steady">Nothing changed: ${l.steady} channel features of this run read steady${l.unscored ? `; ${l.unscored} have no verdict yet (baseline forming, held by figures of other spec options, or data unusable)` : ''}.</p>`);
    out.push(blockedList(blocked), '</section>');
    return out.join('\n');
  }
  out.push(`<p><b>${alarms}</b> channel ${alarms === 1 ? 'feature' : 'features'} at an alarm limit, <b>${r.items.length - alarms}</b> changed${newsText(r)}; ${l.steady} read steady${l.unscored ? `, ${l.unscored} have no verdict` : ''}.</p>`);
  out.push(`<table class="changes-list"><tr><th>verdict</th><th>group</th><th>channel</th><th>feature</th><th>latest</th><th>baseline</th><th>change dB</th><th>score</th><th>on</th><th>since</th></tr>\n${r.items.map(row).join('\n')}\n</table>`);
  out.push(blockedList(blocked));
  if (pictured) out.push(pictured);
  out.push('</section>');
  return out.join('\n');
}

/** The section, charts rendered to SVG; empty text when trends are off. */
export async function changesHtml(r: ChangesReport, pictures: ChannelPictures[]): Promise<string> {
  return changesSection(r, await picturesHtml(r, pictures));
}
