// What an element-wise figure of a chunk declares to join the channel's fused pass (stages/fused/pass.ts).

/** Buffers an accumulator's statements refer to as `$name`. */
export type AccumulatorArrays = Record<string, Float64Array | Int32Array>;

/**
 * One running figure over a channel's samples. Its per-sample work is a few JavaScript statements, so the pass can
 * run the statements of every accumulator of the channel in one loop; everything else is ordinary code around it.
 * In the statements, `v` is the sample and `n` its index in the recording; `$name` is this accumulator's own state
 * value or buffer of that name (state values live in locals during a chunk and in `state` between chunks). The
 * statements call nothing: what happens at a window's end is written to a buffer and handed on in afterChunk, so
 * one compiled loop serves every channel.
 */
export interface Accumulator {
  /** Identity within a channel: stages asking for the same key share one accumulator, computed once. */
  readonly key: string;
  /** Names of the state values, in the order of `state`. */
  readonly names: readonly string[];
  readonly state: Float64Array;
  readonly arrays?: AccumulatorArrays;
  /** Statements for every sample, finite or not (after the finite ones). */
  readonly each?: string;
  /** Statements for finite samples only. */
  readonly finite?: string;
  /**
   * State values that put the accumulator one sample before its rarest branch (a window's end, a full reservoir). The
   * pass's rehearsal starts calls there, so that V8 has seen the branch before it optimises the kernel. An edge keeps
   * the call short (a window made one sample long rather than a long window's re-sum), or V8 optimises the kernel
   * within its first call, before it has feedback.
   */
  readonly edge?: Readonly<Record<string, number>>;
  /** Runs before the pass walks a chunk (per-chunk constants, such as a chunk's robust spread). */
  beforeChunk?(x: Float64Array, n0: number): void;
  /** Runs after the pass has walked a chunk (folding the chunk's sums into the recording's). */
  afterChunk?(x: Float64Array, n0: number): void;
}

/** The common part of an accumulator: its key and named state values (with their start values), read back by name. */
export abstract class Accumulating<K extends string> {
  readonly names: readonly K[];
  readonly state: Float64Array;
  private readonly index: Record<K, number>;
  constructor(readonly key: string, start: Record<K, number>) {
    this.names = Object.keys(start) as K[];
    this.state = Float64Array.from(this.names.map((k) => start[k]));
    this.index = Object.fromEntries(this.names.map((k, i) => [k, i])) as Record<K, number>;
  }
  protected get(k: K): number { return this.state[this.index[k]]; }
  protected set(k: K, v: number): void { this.state[this.index[k]] = v; }
}
