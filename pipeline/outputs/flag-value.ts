// A flag's value as the report shows it: in the unit and form of its threshold (per cent beside per cent, seconds
// beside seconds), named by what it measures; quality.json keeps the bare number.
import type { Flag } from '../../stages/quality/flag.js';
import { plainNumber } from './plain-number.js';

const percent = (f: number) => `${plainNumber(f * 100)} %`;

/** What each flag's value measures, in its threshold's terms. */
const SHOWN: Record<string, (v: number) => string> = {
  saturation: (v) => `${percent(v)} of samples at the limits`,
  dropout: (v) => `${percent(v)} of samples missing`,
  flatline: (v) => `longest constant stretch ${plainNumber(v)} s`,
  aliasing: (v) => `fs = ${plainNumber(v)} × declared highest frequency`,
  declaration: (v) => `duration ${plainNumber(v)} s`,
  noise_floor: (v) => `${plainNumber(v)} dB above the floor`,
  offset: (v) => `|mean| = ${plainNumber(v)}·std`,
  peak_capture: (v) => `${percent(v)} shortfall`,
  resolution: (v) => `${plainNumber(v)} dB`,
  spikes: (v) => `${plainNumber(v)} ${v === 1 ? 'sample' : 'samples'}`,
  velocity_low_edge: (v) => (v > 1 ? `figure ${plainNumber(1 + v)} × the band's own` : `figure ${percent(Math.abs(v))} ${v < 0 ? 'low' : 'high'}`),
};

/** The value column's text: "—" when the flag has no value. */
export const flagValue = (f: Pick<Flag, 'name' | 'value'>): string =>
  f.value == null || !Number.isFinite(f.value) ? '—' : (SHOWN[f.name] ?? plainNumber)(f.value);
