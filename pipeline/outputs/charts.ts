// The quality report's pictures: Vega-Lite specifications rendered to SVG by Vega's headless renderer, where the channel is reduced.
import * as vega from 'vega';
import { compile, type TopLevelSpec } from 'vega-lite';
import type { Evidence } from '../../stages/quality/evidence.js';

import { COLOURS } from './colours.js';
import { AXIS_LABELS } from './plain-number.js';
import { densityUnit } from './density-unit.js';

export { COLOURS };

/**
 * A Vega-Lite specification rendered to SVG by Vega's headless renderer. Its inline data are taken out and named, so each
 * shape of chart is compiled and parsed once and only drawn again with new data: about half the cost of a chart.
 */
export async function svg(spec: TopLevelSpec): Promise<string> {
  const datasets: unknown[][] = [];
  const shape = JSON.stringify(spec, (k, v: unknown) => {
    if (k === 'data' && v && typeof v === 'object' && Array.isArray((v as { values?: unknown }).values)) return { name: `quern_values_${datasets.push((v as { values: unknown[] }).values) - 1}` };
    return v;
  });
  const view = new vega.View(parsedOnce(shape), { renderer: 'none' });
  try {
    datasets.forEach((values, i) => view.data(`quern_values_${i}`, values));
    return flat(await view.toSVG());
  } finally {
    view.finalize();
  }
}

/**
 * The same text, flattened: the renderer builds it by concatenation, a rope of thousands of pieces that takes some three
 * times the text's size while a report's pictures are kept; reading a character makes V8 flatten it into one piece.
 */
const flat = (text: string): string => { text.charCodeAt(0); return text; };

// Parsed charts by shape; a run has a few shapes (one per chart kind, unit and title), so the cap is only a guard.
const MAX_SHAPES = 64;
const parsed = new Map<string, vega.Runtime>();
function parsedOnce(shape: string): vega.Runtime {
  let runtime = parsed.get(shape);
  if (!runtime) {
    if (parsed.size >= MAX_SHAPES) parsed.clear();
    runtime = vega.parse(compile(JSON.parse(shape) as TopLevelSpec).spec);
    parsed.set(shape, runtime);
  }
  return runtime;
}

const base = { width: 300, height: 150, config: { font: 'Helvetica, Arial, sans-serif', axis: { labelFontSize: 10, titleFontSize: 11 }, axisQuantitative: { labelExpr: AXIS_LABELS }, view: { stroke: '#ccc' } } } as const;

function histogramSpec(h: Evidence['histogram'], unit: string): TopLevelSpec {
  const bars = h.counts.map((count, i) => ({ from: h.edges[i], to: h.edges[i + 1], count }));
  const limits = (h.range ?? h.fullScale ?? []).map((v) => ({ v, what: h.range ? 'instrument range' : 'converter full scale' }));
  return {
    ...base, title: { text: 'Amplitude histogram', fontSize: 12 },
    layer: [
      { data: { values: bars }, mark: { type: 'rect', color: '#4a5d7a' }, encoding: { x: { field: 'from', type: 'quantitative', title: unit }, x2: { field: 'to' }, y: { field: 'count', type: 'quantitative', title: 'samples', scale: { type: 'symlog' } } } },
      ...(limits.length ? [{ data: { values: limits }, mark: { type: 'rule' as const, color: COLOURS.fail, strokeDash: [4, 3], strokeWidth: 1.5 }, encoding: { x: { field: 'v', type: 'quantitative' as const } } }] : []),
    ],
  };
}

function spectrumSpec(s: NonNullable<Evidence['spectrum']>, unit: string): TopLevelSpec {
  // A loop, not Math.min(...): a spectrum of a long segment has more bins than one call takes arguments.
  let floor = Infinity;
  for (const d of s.density) if (d > 0 && d < floor) floor = d;
  floor = Math.max(1e-30, floor);
  const points = s.density.map((d, k) => ({ f: k * s.df, d: Math.max(d, floor) })).filter((p) => p.f > 0);
  const rules = [{ f: s.nyquist, what: 'Nyquist' }, ...(s.maxFrequencyHz ? [{ f: s.maxFrequencyHz, what: 'declared highest' }] : [])];
  return {
    ...base, title: { text: 'Power spectral density', fontSize: 12 },
    layer: [
      { data: { values: points }, mark: { type: 'line', color: '#4a5d7a', strokeWidth: 1 }, encoding: { x: { field: 'f', type: 'quantitative', title: 'Hz' }, y: { field: 'd', type: 'quantitative', title: densityUnit(unit), scale: { type: 'log' } } } },
      { data: { values: rules }, mark: { type: 'rule', strokeDash: [4, 3], strokeWidth: 1.5 }, encoding: { x: { field: 'f', type: 'quantitative' }, color: { field: 'what', type: 'nominal', scale: { domain: ['Nyquist', 'declared highest'], range: [COLOURS.fail, COLOURS.warn] }, legend: { orient: 'bottom', title: null } } } },
    ],
  };
}

/** Stretches of windows without a finite sample, as [from, to] in seconds. */
export function gapSpans(rms: ArrayLike<number>, window_s: number): [number, number][] {
  const spans: [number, number][] = [];
  for (let i = 0; i < rms.length; i++) {
    if (rms[i] - rms[i] === 0) continue;
    const from = i;
    while (i + 1 < rms.length && !(rms[i + 1] - rms[i + 1] === 0)) i++;
    spans.push([from * window_s, (i + 1) * window_s]);
  }
  return spans;
}

function trendSpec(t: Evidence['trend'], unit: string): TopLevelSpec {
  // Each window at its start time; a window without a finite sample is null, which breaks the line, and its span is shaded.
  const gaps = gapSpans(t.rms, t.window_s).map(([from, to]) => ({ from, to, what: 'no finite sample' }));
  return {
    ...base, title: { text: `RMS per ${Number(t.window_s.toPrecision(3))} s window`, fontSize: 12 },
    layer: [
      ...(gaps.length ? [{ data: { values: gaps }, mark: { type: 'rect' as const, color: '#9aa5b1', opacity: 0.35 }, encoding: { x: { field: 'from', type: 'quantitative' as const }, x2: { field: 'to' }, tooltip: { field: 'what', type: 'nominal' as const } } }] : []),
      {
        data: { values: Array.from(t.rms, (rms, i) => ({ t: i * t.window_s, rms: rms - rms === 0 ? rms : null })) },
        mark: { type: 'line', color: '#4a5d7a', point: t.rms.length < 40, invalid: 'break-paths-show-domains' },
        encoding: { x: { field: 't', type: 'quantitative', title: gaps.length ? 's (shaded: no finite sample)' : 's' }, y: { field: 'rms', type: 'quantitative', title: unit } },
      },
    ],
  };
}

/** Whether a spectrum has power above DC to draw on a log scale (a constant channel's has none). */
const drawable = (s: NonNullable<Evidence['spectrum']>) => s.density.some((d, k) => k > 0 && d > 0 && d < Infinity);

/** In the spectrum's place when there is none: why, as a box the size of a picture. */
export const noChart = (why: string) => `<div class="no-chart" role="note" style="width:300px;min-height:150px;padding:24px 12px;box-sizing:border-box;border:1px dashed #ccc;font-size:13px;color:#52606d">${why.replace(/[&<>"']/g, (c) => `&#${c.charCodeAt(0)};`)}</div>`;

/** The specifications of a channel's pictures: histogram against the range, spectrum against Nyquist, RMS trend. */
export const evidenceSpecs = (ev: Evidence, unit: string): TopLevelSpec[] =>
  [histogramSpec(ev.histogram, unit), ...(ev.spectrum && drawable(ev.spectrum) ? [spectrumSpec(ev.spectrum, unit)] : []), trendSpec(ev.trend, unit)];

/** The three pictures of a channel; where there is no spectrum, a line saying why in its place. */
export async function evidenceCharts(ev: Evidence, unit: string): Promise<string[]> {
  const charts = await Promise.all(evidenceSpecs(ev, unit).map(svg));
  if (ev.spectrum && drawable(ev.spectrum)) return charts;
  const why = ev.noSpectrum ?? (ev.spectrum ? 'No spectrum: the signal has no power above 0 Hz (a constant signal has no spectrum).' : 'No spectrum: no stretch free of missing samples was long enough for one spectrum segment.');
  return [charts[0], noChart(why), charts[1]];
}
