// The severities' colours, shared by the report, its charts and the workbook (kept apart so none of them loads the others).
import type { Severity } from '../../stages/quality/flag.js';

// Our own palette: deep teal for trustworthy, ochre for a second look, brick red for do-not-use.
export const COLOURS: Record<Severity, string> = { ok: '#2c6e63', warn: '#b7791f', fail: '#a23b2a' };
