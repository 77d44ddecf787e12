// What a --since run recomputed so the changes the deadband holds carry into its period: run.json's record and the
// terminal's lines, apart from the recomputing itself so that every run's report loads no trends scoring to print them.

/** The recordings a --since run recomputed to carry holds, as run.json lists them: how many, how many failed, each one. */
export interface RecomputedForHolds { count: number; failed: number; recordings: { recording: string; group: string; why: string; status?: 'reduced' | 'failed'; reason?: string }[] }

export function carriedRecord(recordings: readonly string[], outcome: (recording: string) => { group: string; why: string; status?: 'reduced' | 'failed'; reason?: string }): RecomputedForHolds {
  const listed = recordings.map((recording) => ({ recording, ...outcome(recording) }));
  return { count: listed.length, failed: listed.filter((r) => r.status === 'failed').length, recordings: listed };
}

/** The terminal's lines: how many were recomputed so the holds carry, and each one that failed. */
export function carriedLines(r: RecomputedForHolds): string[] {
  if (!r.count) return [];
  return [
    `  HELD    recomputed ${r.count} stored ${r.count === 1 ? 'recording' : 'recordings'} before this period whose figures did not compare, so the changes the deadband holds carry into the period as in a whole run${r.failed ? `; ${r.failed} failed` : ''}; see run.json (period.recomputed_for_held_changes)`,
    ...r.recordings.filter((x) => x.status === 'failed').map((x) => `  FAILED  ${x.recording} (recomputed for a held change): ${x.reason}`),
  ];
}
