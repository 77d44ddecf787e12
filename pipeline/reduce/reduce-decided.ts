// Reducing what was decided: the recordings to compute go to the pool in batches, and each batch's results are stored as
// it comes back, so a run killed later keeps that work; progress is told a recording at a time.
import type { Progress } from '../outputs/progress.js';
import { writing } from '../outputs/staged.js';
import type { Decided, Decision } from '../plan/reuse.js';
import type { Store } from '../store/store.js';
import { reduceAll, type Pool } from './pool.js';

/** A reducer over one pool and store; `threadsGivenUp` counts the threads given up for a stall over every call. */
export function decidedReducer(pool: Pool, store: Store, stallMs?: number) {
  let threadsGivenUp = 0;
  const reduce = async (work: Decision[], itemOf: Decided['itemOf'], told?: Progress): Promise<void> => {
    threadsGivenUp += (await reduceAll(pool, work, {
      stallMs,
      sizeOf: (d) => d.file.size,
      itemOf,
      onBatch: async (results, batch) => {
        // Stored at once, a batch a write.
        await writing(store.own!, () => store.append(results));
        // Results come back in the batch's order.
        results.forEach((r, i) => {
          const d = batch[i];
          if (d.compute.length) told?.done(r.facts, d.reused.length ? `(recomputed ${d.compute.join(', ')}; reused the rest)` : undefined);
        });
      },
    })).threadsGivenUp;
  };
  return { reduce, threadsGivenUp: () => threadsGivenUp };
}
