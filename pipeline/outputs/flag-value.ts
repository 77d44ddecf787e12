// A flag's value as the report shows it: in the unit and form of its threshold (per cent beside per cent, seconds
// beside seconds), named by what it measures; quality.json keeps the bare number.
import type { Flag } from '../../stages/quality/flag.js';
import { plainNumber } from './plain-number.js';

const percent = (f: number) => `${plainNumber(f * 100)} %`;

type Evidence = Flag['evidence'];
const evidenced = (e: Evidence | undefined, key: string) => { const x = e?.[key]; return typeof x === 'number' && Number.isFinite(x) ? x : 0; };

/**
 * The dropout flag's value, with what raised it: its value is the share missing, which reads 0 where a stretch of exact
 * zeros or an irregular time step raised it, so the evidence names those (the zeros only where nothing is missing).
 */
function dropoutShown(v: number, e?: Evidence): string {
  const zeros = evidenced(e, 'zero_run_s'), irregular = evidenced(e, 'irregular_steps');
  const parts = [
    v > 0 ? `${percent(v)} of samples missing` : '',
    v === 0 && zeros > 0 ? `exact zeros for ${plainNumber(zeros)} s (no sample missing)` : '',
    irregular > 0 ? `${plainNumber(irregular)} irregular time ${irregular === 1 ? 'step' : 'steps'}` : '',
  ].filter(Boolean);
  return parts.length ? parts.join('; ') : `${percent(v)} of samples missing`;
}

/** What each flag's value measures, in its threshold's terms (some with their evidence). */
const SHOWN: Record<string, (v: number, e?: Evidence) => string> = {
  saturation: (v) => `${percent(v)} of samples at the limits`,
  dropout: dropoutShown,
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
export const flagValue = (f: Pick<Flag, 'name' | 'value'> & { evidence?: Evidence }): string =>
  f.value == null || !Number.isFinite(f.value) ? '—' : SHOWN[f.name] ? SHOWN[f.name](f.value, f.evidence) : plainNumber(f.value);
