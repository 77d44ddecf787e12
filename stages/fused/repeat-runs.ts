// The longest run of exactly repeated values (flatline): its length in repeats and where it ends, how many samples repeat in
// all, and how many lie in stretches of at least a given length (holding a value other than zero, which is a dropout's): all
// of them, and those that end with a jump of more than two steps of the data (a held value, not a slow signal on its codes).
import type { ChannelContext } from '../stage.js';
import { Accumulating, type Accumulator } from './accumulator.js';
import { fusedOf } from './pass.js';

/** Samples of each chunk searched for the data's smallest change (and on until one is found). */
const CHANGE_SEARCH = 4096;

/** Repeats (equal samples − 1) below which no stretch counts as held: a sampled sine repeats a value at most once, where two samples straddle a crest alike. */
export const MIN_HOLD_REPEATS = 3;

/**
 * The smallest change between successive finite samples of x (the first `count` of them, then on until a change is found),
 * `prev` being the sample before x[0]; Infinity when none changes. On a quantiser's codes it is one step of the data (IEEE Std
 * 1241: successive codes differ by a whole number of code bins), on float data the finest motion the data show.
 */
export function smallestChange(x: Float64Array, prev = NaN, count = CHANGE_SEARCH, least = Infinity): number {
  let found = false;
  for (let i = 0; i < x.length && (i < count || !found); i++) {
    const d = x[i] > prev ? x[i] - prev : prev - x[i];
    prev = x[i];
    if (d > 0 && d < Infinity) { found = true; if (d < least) least = d; }
  }
  return least;
}

export class RepeatRuns extends Accumulating<'prev' | 'run' | 'longest' | 'end' | 'repeats' | 'minRun' | 'stuck' | 'limit' | 'held' | 'holds' | 'jumps' | 'longestJump'> implements Accumulator {
  // A stretch is counted as it ends, so its branch is one the rehearsal can start at (below), not one reached only after
  // minRun repeats in a row. Within it, the jump that ends the stretch is added without a branch of its own.
  readonly each = 'if (v === $prev) { $repeats++; if (++$run > $longest) { $longest = $run; $end = n; $longestJump = -1; } } else { if ($run >= $minRun && $prev !== 0) { $stuck += $run + 1; const jump = v > $prev ? v - $prev : $prev - v, take = jump > $limit && jump - jump === 0; $held += take ? $run + 1 : 0; $holds += take ? 1 : 0; $jumps += take ? jump : 0; $longestJump = $end === n - 1 ? jump : $longestJump; } $run = 0; } $prev = v;';
  /** One sample before a long stretch ends: a stretch of minRun repeats of a value other than zero. */
  readonly edge: { run: number; prev: number };
  private readonly converterStep: number;
  private smallest = Infinity;
  /**
   * `minRun`: the repeats (samples − 1) from which a stretch counts as stuck (at least MIN_HOLD_REPEATS); `converterStep`: the
   * declared converter's step, the least a step of the data can be (null when unknown).
   */
  constructor(minRun: number, converterStep: number | null = null) {
    const repeats = Math.max(MIN_HOLD_REPEATS, minRun);
    super('repeat-runs', { prev: NaN, run: 0, longest: 0, end: 0, repeats: 0, minRun: repeats, stuck: 0, limit: Infinity, held: 0, holds: 0, jumps: 0, longestJump: -1 });
    this.edge = { run: repeats, prev: 0.25 };
    this.converterStep = converterStep ?? 0;
  }

  beforeChunk(x: Float64Array): void {
    // One step of the data: the smallest change seen so far, never below the converter's step; a held stretch ends above two.
    this.smallest = smallestChange(x, this.get('prev'), CHANGE_SEARCH, this.smallest);
    this.set('limit', 2 * Math.max(this.converterStep, this.smallest));
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
  /** Of those, the samples in stretches that ended with a jump of more than two steps of the data (the open one has not ended). */
  get held() { return this.get('held'); }
  /** How many such stretches, and the sum of the jumps that ended them. */
  get holds() { return this.get('holds'); }
  get jumps() { return this.get('jumps'); }
  /**
   * The jump that ended the longest stretch, when it held a value other than zero for at least minRun repeats and has ended:
   * null while it is still open at the end of what was pushed, NaN when a missing sample ended it.
   */
  get longestJump() { const j = this.get('longestJump'); return j < 0 ? null : j; }
  /** One step of the data as judged so far: the smallest change seen (the converter's step when declared and nothing finer): null when none. */
  get dataStep() { return Number.isFinite(this.smallest) ? Math.max(this.converterStep, this.smallest) : null; }
}

/** The channel's repeat runs (one a channel: its first caller sets how long a stretch counts as stuck, `minStuckS` seconds). */
export const repeatRunsOf = (ctx: ChannelContext, minStuckS = 0.01) =>
  fusedOf(ctx, 'repeat-runs', () => new RepeatRuns(Math.round(minStuckS * ctx.sampleRate), ctx.stepSize));
