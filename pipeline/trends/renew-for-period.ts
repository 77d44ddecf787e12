// A --since run's renewal of its baselines: the stored recordings holding stale baseline places are decided and reduced
// again (the first reading of the history names them), then the stale nights a held verdict of the period rests on through
// the deadband (carry-holds.ts), and the history is read again for the trends step.
import type { ReductionSpec } from '../../spec/reduction.js';
import type { Decided, Decision } from '../plan/reuse.js';
import type { ScannedRecording } from '../select/scan.js';
import type { TrendOptions } from './options.js';
import { carryHolds } from './carry-holds.js';
import { carriedRecord, type RecomputedForHolds } from './carried-record.js';
import { recomputedRecord, renewStaleBaselines, type RecomputedForBaselines } from './renew-baselines.js';
import { trendsBasis, type TrendsBasis, type TrendsInput } from './trends.js';

/** run.json's records of what the renewal recomputed: for the baselines, and for the held verdicts. */
export interface Renewed { recomputed_for_baselines: RecomputedForBaselines; recomputed_for_held_changes: RecomputedForHolds }

/** The trends' basis after renewal, and the records of the recordings recomputed for it. */
export async function renewForPeriod(out: string, spec: ReductionSpec, input: TrendsInput, trends: TrendOptions, recordings: readonly ScannedRecording[],
  decideAgain: (files: ScannedRecording[]) => Promise<Decided>, reduce: (work: Decision[], itemOf: Decided['itemOf']) => Promise<void>): Promise<{ basis: TrendsBasis; renewed: Renewed }> {
  const scannedAs = new Map(recordings.map((r) => [r.recording, r]));
  const whyOf = new Map<string, string>();
  const read = () => trendsBasis(out, spec, input, true);
  const recompute = async (names: string[]) => {
    const again = await decideAgain(names.flatMap((r) => scannedAs.get(r) ?? []));
    for (const d of again.decisions) whyOf.set(d.recording, d.why);
    await reduce(again.decisions.filter((d) => d.stores && !d.restamp), again.itemOf);
  };
  const found = await renewStaleBaselines(read, recompute, trends);
  const carried = await carryHolds(found.basis, read, recompute, trends);
  const outcome = (r: string) => {
    const f = input.store.get(r)?.facts;
    return { group: input.present.get(r)!, why: whyOf.get(r) ?? '', ...(f ? { status: f.status, ...(f.reason ? { reason: f.reason } : {}) } : {}) };
  };
  return { basis: carried.basis, renewed: { recomputed_for_baselines: recomputedRecord(found.recomputed, outcome), recomputed_for_held_changes: carriedRecord(carried.recomputed, outcome) } };
}
