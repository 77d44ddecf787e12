// The quality report's pictures: Vega-Lite specifications rendered to SVG by Vega's headless renderer, where the channel is reduced.
import * as vega from 'vega';
import { compile, type TopLevelSpec } from 'vega-lite';
import type { Evidence } from '../../stages/quality/evidence.js';

import { COLOURS } from './colours.js';

export { COLOURS };

/** A Vega-Lite specification rendered to SVG by Vega's headless renderer. */
export async function svg(spec: TopLevelSpec): Promise<string> {
  const view = new vega.View(vega.parse(compile(spec).spec), { renderer: 'none' });
  try {
    return await view.toSVG();
  } finally {
    view.finalize();
  }
}

const base = { width: 300, height: 150, config: { font: 'Helvetica, Arial, sans-serif', axis: { labelFontSize: 10, titleFontSize: 11 }, view: { stroke: '#ccc' } } } as const;

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
  const floor = Math.max(1e-30, Math.min(...s.density.filter((d) => d > 0)));
  const points = s.density.map((d, k) => ({ f: k * s.df, d: Math.max(d, floor) })).filter((p) => p.f > 0);
  const rules = [{ f: s.nyquist, what: 'Nyquist' }, ...(s.maxFrequencyHz ? [{ f: s.maxFrequencyHz, what: 'declared highest' }] : [])];
  return {
    ...base, title: { text: 'Power spectral density', fontSize: 12 },
    layer: [
      { data: { values: points }, mark: { type: 'line', color: '#4a5d7a', strokeWidth: 1 }, encoding: { x: { field: 'f', type: 'quantitative', title: 'Hz' }, y: { field: 'd', type: 'quantitative', title: `${unit}²/Hz`, scale: { type: 'log' } } } },
      { data: { values: rules }, mark: { type: 'rule', strokeDash: [4, 3], strokeWidth: 1.5 }, encoding: { x: { field: 'f', type: 'quantitative' }, color: { field: 'what', type: 'nominal', scale: { domain: ['Nyquist', 'declared highest'], range: [COLOURS.fail, COLOURS.warn] }, legend: { orient: 'bottom', title: null } } } },
    ],
  };
}

function trendSpec(t: Evidence['trend'], unit: string): TopLevelSpec {
  return {
    ...base, title: { text: `RMS per ${Number(t.window_s.toPrecision(3))} s window`, fontSize: 12 },
    data: { values: t.rms.map((rms, i) => ({ t: i * t.window_s, rms })) },
    mark: { type: 'line', color: '#4a5d7a', point: t.rms.length < 40 },
    encoding: { x: { field: 't', type: 'quantitative', title: 's' }, y: { field: 'rms', type: 'quantitative', title: unit } },
  };
}


/** The three pictures of a channel: histogram against the range, spectrum against Nyquist, RMS trend. */
export async function evidenceCharts(ev: Evidence, unit: string): Promise<string[]> {
  const specs = [histogramSpec(ev.histogram, unit), ...(ev.spectrum ? [spectrumSpec(ev.spectrum, unit)] : []), trendSpec(ev.trend, unit)];
  return Promise.all(specs.map(svg));
}
