// The markers of the "what changed" histories: a recording's shape says its verdict as well as its colour does, so changed and
// alarm read apart in greyscale and without telling hues apart; the key draws the same shapes.
import type { Verdict } from '../trends/verdict.js';

export type Marker = 'baseline' | 'later' | 'changed' | 'alarm' | 'off the scale';

/** Vega's symbol shapes, one per marker. */
export const MARKER_SHAPES: Record<Marker, string> = { baseline: 'square', later: 'circle', changed: 'diamond', alarm: 'cross', 'off the scale': 'triangle-up' };

/** Symbol areas in px²: a change or alarm drawn larger, so its shape shows at a glance. */
export const MARKER_SIZES: Record<Marker, number> = { baseline: 50, later: 50, changed: 90, alarm: 100, 'off the scale': 50 };

/** A recording's marker: data unusable first (placed at the edge), then an alarm or change, then its place in the baseline. */
export function markerOf(p: { usable: boolean; verdict: Verdict | null; baseline: boolean }): Marker {
  if (!p.usable) return 'off the scale';
  if (p.verdict === 'alarm' || p.verdict === 'changed') return p.verdict;
  return p.baseline ? 'baseline' : 'later';
}

// Outlines in a 10 × 10 box, drawn as Vega draws its symbols, for the key beside the pictures.
const OUTLINES: Record<Marker, string> = {
  baseline: 'M1.5 1.5H8.5V8.5H1.5Z',
  later: 'M5 1.2A3.8 3.8 0 1 1 4.99 1.2Z',
  changed: 'M5 0.5L9.5 5L5 9.5L0.5 5Z',
  alarm: 'M3.5 0.8H6.5V3.5H9.2V6.5H6.5V9.2H3.5V6.5H0.8V3.5H3.5Z',
  'off the scale': 'M5 1L9.3 8.8H0.7Z',
};

/** A marker as a small inline picture, for text. */
export const markerGlyph = (marker: Marker, colour: string) =>
  `<svg class="marker" width="10" height="10" viewBox="0 0 10 10" role="img" aria-label="${marker}"><path d="${OUTLINES[marker]}" fill="${colour}"/></svg>`;
