// A --since run's renewal of its baselines: the stored recordings holding stale baseline places are decided and reduced
// again (the first reading of the history names them), then the history is read again for the trends step.
import type { ReductionSpec } from '../../spec/reduction.js';
import type { Decided, Decision } from '../plan/reuse.js';
import type { ScannedRecording } from '../select/scan.js';
import type { TrendOptions } from './options.js';
import { recomputedRecord, renewStaleBaselines, type RecomputedForBaselines } from './renew-baselines.js';
import { trendsBasis, type TrendsBasis, type TrendsInput } from './trends.js';

/** The trends' basis after renewal, and the record of the recordings recomputed for it. */
export async function renewForPeriod(out: string, spec: ReductionSpec, input: TrendsInput, trends: TrendOptions, recordings: readonly ScannedRecording[],
  decideAgain: (files: ScannedRecording[]) => Promise<Decided>, reduce: (work: Decision[], itemOf: Decided['itemOf']) => Promise<void>): Promise<{ basis: TrendsBasis; renewed: RecomputedForBaselines }> {
  const scannedAs = new Map(recordings.map((r) => [r.recording, r]));
  const whyOf = new Map<string, string>();
  const found = await renewStaleBaselines(() => trendsBasis(out, spec, input, true), async (names) => {
    const again = await decideAgain(names.flatMap((r) => scannedAs.get(r) ?? []));
    for (const d of again.decisions) whyOf.set(d.recording, d.why);
    await reduce(again.decisions.filter((d) => d.stores && !d.restamp), again.itemOf);
  }, trends);
  const renewed = recomputedRecord(found.recomputed, (r) => {
    const f = input.store.get(r)?.facts;
    return { group: input.present.get(r)!, why: whyOf.get(r) ?? '', ...(f ? { status: f.status, ...(f.reason ? { reason: f.reason } : {}) } : {}) };
  });
  return { basis: found.basis, renewed };
}
