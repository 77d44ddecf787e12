// The longest run of exactly repeated values (flatline): its length in repeats and where it ends, how many samples repeat in
// all, and how many lie in stretches of at least a given length (holding a value other than zero, which is a dropout's).
import type { ChannelContext } from '../stage.js';
import { Accumulating, type Accumulator } from './accumulator.js';
import { fusedOf } from './pass.js';

export class RepeatRuns extends Accumulating<'prev' | 'run' | 'longest' | 'end' | 'repeats' | 'minRun' | 'stuck'> implements Accumulator {
  // A stretch is counted as it ends, so its branch is one the rehearsal can start at (below), not one reached only after
  // minRun repeats in a row.
  readonly each = 'if (v === $prev) { $repeats++; if (++$run > $longest) { $longest = $run; $end = n; } } else { if ($run >= $minRun && $prev !== 0) $stuck += $run + 1; $run = 0; } $prev = v;';
  /** One sample before a long stretch ends: a stretch of minRun repeats of a value other than zero. */
  readonly edge: { run: number; prev: number };
  /** `minRun`: the repeats (samples − 1, at least 1) from which a stretch counts as stuck. */
  constructor(minRun: number) {
    super('repeat-runs', { prev: NaN, run: 0, longest: 0, end: 0, repeats: 0, minRun, stuck: 0 });
    this.edge = { run: minRun, prev: 0.25 };
  }
  /** Repeats in the longest run (a run of k equal samples counts k − 1). */
  get longest() { return this.get('longest'); }
  get longestEnd() { return this.get('end'); }
  /** Samples equal to the one before them, over the whole channel. */
  get repeats() { return this.get('repeats'); }
  /** Samples in stretches of more than minRepeats repeats of a value other than zero, the one still open at the end included. */
  get stuck() {
    const run = this.get('run'), open = run >= this.get('minRun') && this.get('prev') !== 0 ? run + 1 : 0;
    return this.get('stuck') + open;
  }
}

/** The channel's repeat runs (one a channel: its first caller sets how long a stretch counts as stuck, `minStuckS` seconds). */
export const repeatRunsOf = (ctx: ChannelContext, minStuckS = 0.01) =>
  fusedOf(ctx, 'repeat-runs', () => new RepeatRuns(Math.max(1, Math.round(minStuckS * ctx.sampleRate))));
