// A capture still being written reads as a recording cut short. Recordings to compute whose modification time lies within
// the settle span before the scan read it are left whole to the next run: neither reduced nor failed, and named.
import type { Decision } from './reuse.js';

/** A recording left to settle, as run.json names it. */
export interface Settling { recording: string; group: string; modified: string; age_s: number }

/**
 * Splits the decisions into those taken now and those left to settle (`settleMs` 0: none). Only recordings with something
 * to compute wait: a stored result that still stands is used as it is. A modification time after the scan's read (a
 * clock ahead on the machine that wrote it) cannot be judged, so that recording is taken.
 */
export function leaveSettling(decisions: Decision[], groupNames: string[], settleMs = 0): { taken: Decision[]; settling: Settling[] } {
  if (!(settleMs > 0)) return { taken: decisions, settling: [] };
  const taken: Decision[] = [], settling: Settling[] = [];
  for (const d of decisions) {
    const age = d.file.readAtMs - d.file.mtimeMs;
    if (d.compute.length > 0 && age >= 0 && age < settleMs) {
      settling.push({ recording: d.recording, group: groupNames[d.group], modified: new Date(d.file.mtimeMs).toISOString(), age_s: Math.round(age) / 1000 });
    } else taken.push(d);
  }
  return { taken, settling };
}
