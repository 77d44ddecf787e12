// The report's pictures: a chart drawn from a shape parsed once gives the same SVG as Vega-Lite's compiler and Vega's
// parser run on the whole specification with its data inline (the libraries' own path, the reference here).
import * as vega from 'vega';
import { compile, type TopLevelSpec } from 'vega-lite';
import { describe, expect, it } from 'vitest';
import { evidenceSpecs, svg } from '../pipeline/outputs/charts.js';
import { densityUnit } from '../pipeline/outputs/density-unit.js';
import { flagValue } from '../pipeline/outputs/flag-value.js';
import { plainNumber } from '../pipeline/outputs/plain-number.js';
import { packEvidence, unpackEvidence, type Evidence, type PackedEvidence } from '../stages/quality/evidence.js';
import { decodeResults, encodeRecord, recordBody, type EntryFacts, type EntryResults } from '../pipeline/store/record.js';

async function drawnWhole(spec: TopLevelSpec): Promise<string> {
  const view = new vega.View(vega.parse(compile(spec).spec), { renderer: 'none' });
  try { return await view.toSVG(); } finally { view.finalize(); }
}

// Invented pictures' data: a bell-shaped histogram, a falling spectrum, a wavering RMS.
const evidenceOf = (n: number, limits: boolean): Evidence => ({
  histogram: { edges: Array.from({ length: 121 }, (_, i) => i / 10 - 6 + n), counts: Array.from({ length: 120 }, (_, i) => Math.round(1000 * Math.exp(-(((i - 60) / (20 + n)) ** 2)))), range: null, fullScale: limits ? [-5, 5] : null },
  spectrum: n % 2 ? null : { df: 50, density: Array.from({ length: 512 }, (_, k) => 1e-3 / (1 + k + n)), nyquist: 25600, maxFrequencyHz: n % 3 ? null : 8000 },
  trend: { window_s: 0.1, rms: Array.from({ length: n % 2 ? 30 : 300 }, (_, i) => 1 + 0.1 * Math.sin(i + n)) },
});

// Invented: the smallest stored entry that can carry the pictures' data.
const facts = { recording: 'r.wav', group: 'g', status: 'reduced', version: '0', identity: { size: 1, mtimeMs: 2, hash: null }, readAtMs: 3, declKey: 'k', groupKeys: {}, seconds: 0, frames: 1, sampleRate: 1, startTime: null, channels: 1, notes: {}, storedAt: 4 } as EntryFacts;
const results = { recording: 'r.wav', group: 'g', status: 'reduced', base: null, groups: {} };

describe('the report\'s pictures', () => {
  it('draw the same SVG as the whole specification compiled and parsed afresh, chart after chart of one shape', async () => {
    for (let n = 0; n < 5; n++) {
      for (const spec of evidenceSpecs(evidenceOf(n, n % 2 === 0), n % 2 ? 'Pa' : 'm/s^2')) expect(await svg(spec)).toBe(await drawnWhole(spec));
    }
  });

  it('keep their data packed with a stored result, read back from its bytes to float32 precision', () => {
    const ev = evidenceOf(2, true);
    const stored = decodeResults(recordBody(encodeRecord(facts, { ...results, groups: { quality: { evidence: [{ data: packEvidence(ev) }] } } } as unknown as EntryResults)));
    const back = unpackEvidence((stored.groups.quality as unknown as { evidence: { data: PackedEvidence }[] }).evidence[0].data);
    expect(back.histogram.counts).toEqual(ev.histogram.counts);
    back.spectrum!.density.forEach((d, k) => expect(Math.abs(d - ev.spectrum!.density[k])).toBeLessThanOrEqual(Math.abs(ev.spectrum!.density[k]) * 2 ** -23));
    back.trend.rms.forEach((r, i) => expect(Math.abs(r - ev.trend.rms[i])).toBeLessThanOrEqual(r * 2 ** -23));
    expect(back.histogram.fullScale).toEqual([-5, 5]);
  });
});

describe('the report\'s units and numbers', () => {
  it('squares a compound unit whole: (m/s^2)²/Hz, as a unit raised to a power is bracketed when compound (SI Brochure, 9th ed., 5.4.6; from memory)', () => {
    expect(densityUnit('m/s^2')).toBe('(m/s^2)²/Hz');
    expect(densityUnit('µm/m')).toBe('(µm/m)²/Hz');
    expect(densityUnit('Pa')).toBe('Pa²/Hz');
    expect(densityUnit('N')).toBe('N²/Hz');
  });

  it('writes numbers in one notation: plain from 0.001 to 10⁶, a power of ten outside, as d3-format\'s "e" (the charts\' labels), no signed zero', () => {
    expect(plainNumber(0.25)).toBe('0.25');
    expect(plainNumber(1234.5678)).toBe('1235');
    expect(plainNumber(4e-9)).toBe('4e-9');
    expect(plainNumber(1.5e-7)).toBe('1.5e-7');
    expect(plainNumber(2.5e7)).toBe('2.5e+7');
    expect(plainNumber(-0)).toBe('0');
  });

  it('gives a flag\'s value in its threshold\'s terms: a fraction in per cent (×100, common practice), a run in seconds, a count of samples', () => {
    expect(flagValue({ name: 'saturation', value: 9.766e-5 })).toBe('0.009766 % of samples at the limits');
    expect(flagValue({ name: 'dropout', value: 0.25 })).toBe('25 % of samples missing');
    // A dropout raised by a stretch of exact zeros (nothing missing) or an irregular time step says so, from its evidence.
    expect(flagValue({ name: 'dropout', value: 0, evidence: { missing: 0, zero_run_s: 0.3, irregular_steps: null } })).toBe('exact zeros for 0.3 s (no sample missing)');
    expect(flagValue({ name: 'dropout', value: 0, evidence: { missing: 0, zero_run_s: 0, irregular_steps: 2 } })).toBe('2 irregular time steps');
    expect(flagValue({ name: 'dropout', value: 0.25, evidence: { missing: 2000, zero_run_s: 0.3, irregular_steps: null } })).toBe('25 % of samples missing');
    expect(flagValue({ name: 'flatline', value: 4 })).toBe('longest constant stretch 4 s');
    expect(flagValue({ name: 'spikes', value: 1 })).toBe('1 sample');
    expect(flagValue({ name: 'resolution', value: null })).toBe('—');
    // The velocity edge's estimated error, signed as a fraction: its size in per cent and its direction, as its message says.
    expect(flagValue({ name: 'velocity_low_edge', value: -0.104 })).toBe('figure 10.4 % low');
    expect(flagValue({ name: 'velocity_low_edge', value: 0.0625 })).toBe('figure 6.25 % high');
    expect(flagValue({ name: 'velocity_low_edge', value: 3.5 })).toBe('figure 4.5 × the band\'s own');
  });
});
