// The severities' colours, shared by the report, its pictures and the workbook: deep teal for trustworthy, slate for a note,
// ochre for a second look, brick red for do-not-use.
import type { Severity } from '../../stages/quality/flag.js';

export const COLOURS: Record<Severity, string> = { ok: '#2c6e63', note: '#5b7083', warn: '#b7791f', fail: '#a23b2a' };

/**
 * Level as colour, ours: paper, straw, ochre, brick red, dark brown, each anchor darker than the one before (CIE L* about
 * 94, 78, 56, 40, 18), so the ramp reads in greyscale and without telling hues apart. Interpolate it in CIELAB, where L*
 * runs straight between anchors.
 */
export const LEVEL_RAMP = ['#f3efe4', '#e2bb70', '#b7791f', '#a23b2a', '#4a1f1c'] as const;
