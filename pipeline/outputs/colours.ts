// The severities' colours, shared by the report, its pictures and the workbook: deep teal for trustworthy, slate for a note,
// ochre for a second look, brick red for do-not-use.
import type { Severity } from '../../stages/quality/flag.js';

export const COLOURS: Record<Severity, string> = { ok: '#2c6e63', note: '#5b7083', warn: '#b7791f', fail: '#a23b2a' };
