// The fused pass: every element-wise accumulator of a channel walks each chunk in one loop, not one loop per stage.
// Stages declare the accumulators they read (fusedOf); the pass, a shared product of the channel, joins their
// per-sample statements into one kernel, compiled once per thread for each set of accumulator kinds.
import type { ChannelContext, Stage } from '../stage.js';
import type { Accumulator, AccumulatorArrays } from './accumulator.js';

type Kernel = (x: Float64Array, from: number, to: number, n0: number, states: Float64Array[], arrays: AccumulatorArrays[keyof AccumulatorArrays][]) => void;

const BLOCK = 4096;

// Kernels depend only on the statements joined (their signature), not on a channel's values (those come in as arguments, so one kernel
// serves every channel with the same feedback): made once per thread and shared.
const kernels = new Map<string, Kernel>();

/**
 * The JavaScript source of one loop running every accumulator's statements over x[from … to), the sample at i being number
 * n0 + i of the recording: a finite sample's statements first, then every sample's, so a window may count a finite sample and end on it.
 */
export function kernelSource(accs: readonly Accumulator[]): string {
  const load: string[] = [], store: string[] = [], each: string[] = [], finite: string[] = [];
  let arrayIndex = 0;
  accs.forEach((a, i) => {
    const local = (name: string) => `a${i}_${name}`;
    const rename = (code: string) => code.replace(/\$(\w+)/g, (_, name: string) => {
      if (!a.names.includes(name) && !(a.arrays && name in a.arrays)) throw new Error(`accumulator ${a.key}: $${name} is not declared`);
      return local(name);
    });
    load.push(`const s${i} = states[${i}];`);
    a.names.forEach((name, k) => { load.push(`let ${local(name)} = s${i}[${k}];`); store.push(`s${i}[${k}] = ${local(name)};`); });
    for (const name of Object.keys(a.arrays ?? {})) load.push(`const ${local(name)} = arrays[${arrayIndex++}];`);
    if (a.each) each.push(`{ ${rename(a.each)} }`);
    if (a.finite) finite.push(`{ ${rename(a.finite)} }`);
  });
  return `${load.join('\n')}
for (let i = from; i < to; i++) {
  const v = x[i], n = n0 + i;
  ${finite.length ? `if (v - v === 0) {\n    ${finite.join('\n    ')}\n  }` : ''}
  ${each.join('\n  ')}
}
${store.join('\n')}`;
}

/** What a kernel's source is made from, in order: found in the cache without writing the source out for every channel. */
export function kernelSignature(accs: readonly Accumulator[]): string {
  return accs.map((a) => `${a.names.join(',')}\u0001${Object.keys(a.arrays ?? {}).join(',')}\u0001${a.each ?? ''}\u0001${a.finite ?? ''}`).join('\u0002');
}

/** Runs a channel's accumulators over each chunk in one loop; a shared product, fed before the stages. */
export class FusedPass implements Stage {
  private readonly accs: Accumulator[] = [];
  private kernel: Kernel | null = null;
  private states: Float64Array[] = [];
  private readonly arrays: AccumulatorArrays[keyof AccumulatorArrays][] = [];
  private n0 = 0;

  /** The accumulator under that key, made and joining the pass the first time; every request comes before the first chunk. */
  joinOrMake<A extends Accumulator>(key: string, make: () => A): A {
    const have = this.accs.find((x) => x.key === key);
    if (have) return have as A;
    if (this.kernel) throw new Error(`accumulator ${key} asked for after the pass started`);
    const a = make();
    if (a.key !== key) throw new Error(`accumulator made for ${key} calls itself ${a.key}`);
    this.accs.push(a);
    return a;
  }

  private compile(x: Float64Array): Kernel {
    const signature = kernelSignature(this.accs);
    this.states = this.accs.map((a) => a.state);
    let kernel = kernels.get(signature);
    if (!kernel) {
      kernel = new Function(`return function fusedKernel(x, from, to, n0, states, arrays) {\n${kernelSource(this.accs)}\n};`)() as Kernel;
      rehearse(kernel, x, this.accs, this.states, this.arrays);
      kernels.set(signature, kernel);
    }
    return kernel;
  }

  /** Buffers are passed each chunk, so an accumulator may replace one (grown) before it. */
  private gatherArrays(): void {
    let k = 0;
    for (let i = 0; i < this.accs.length; i++) {
      const own = this.accs[i].arrays;
      if (own) for (const name in own) this.arrays[k++] = own[name];
    }
  }

  push(x: Float64Array): void {
    const accs = this.accs, n0 = this.n0, arrays = this.arrays;
    for (let i = 0; i < accs.length; i++) accs[i].beforeChunk?.(x, n0);
    this.gatherArrays();
    // Compiled after the chunk's constants are set, so that the rehearsal's copies hold a real chunk's state.
    const kernel = (this.kernel ??= this.compile(x));
    // In blocks: a branch first taken late (a window's end, an outlier) sends V8 back to its interpreter for the rest
    // of one block only, while it re-optimises the loop.
    for (let from = 0; from < x.length; from += BLOCK) kernel(x, from, Math.min(x.length, from + BLOCK), n0, this.states, arrays);
    for (let i = 0; i < accs.length; i++) accs[i].afterChunk?.(x, n0);
    this.n0 += x.length;
  }

  finish() { return {}; }
}

// A new kernel is rehearsed before it runs for real, on copies of the state: first over a few rare values (missing,
// infinite, zero, repeated, fractional and negative samples: a finite statement's magnitude sees a negative one), each call starting at every accumulator's edge (one sample before a
// window's end), then over the first chunk in short calls. V8 then optimises it with feedback from every branch the data
// can take. Otherwise a branch first taken after V8 optimised the kernel (a window's end, a repeated sample, a sum that
// outgrows a small integer) deoptimises it in the middle of a long loop: V8 11.3 (Node 20) then recompiled it, often
// through on-stack replacement as well, up to six compilations a thread (some 150 ms of compiling), and in some runs
// ran every later call through on-stack replacement, about three times slower (8 against 24 ns a sample for statistics).
// The rehearsal opens with empty calls: V8 gives a function its feedback vector only after some work, and feedback
// from a call's first lines is kept only once the vector exists. A long first call (an edge that ran a 1 s window's
// re-sum) made V8 choose to optimise the kernel before its first lines had any feedback, and in some runs its compiler
// read them still empty: the optimised kernel then gave up at its first line, every time it was called.
const OPENING_CALLS = 16, REHEARSAL_CALL = 64, RARE = Float64Array.of(NaN, 0, 0, 0, 0.5, 0.5, 0.5, Infinity, -Infinity, -0.5), RARE_CALLS = 64;
function rehearse(kernel: Kernel, x: Float64Array, accs: readonly Accumulator[], states: Float64Array[], arrays: AccumulatorArrays[keyof AccumulatorArrays][]): void {
  const s = states.map((a) => a.slice()), b = arrays.map((a) => a.slice());
  const edges = accs.map((a) => Object.entries(a.edge ?? {}).map(([name, value]) => {
    const at = a.names.indexOf(name);
    if (at < 0) throw new Error(`accumulator ${a.key}: its edge names ${name}, not one of its state values`);
    return [at, value] as const;
  }));
  for (let k = 0; k < OPENING_CALLS; k++) kernel(RARE, 0, 0, 0, s, b);
  for (let k = 0; k < RARE_CALLS; k++) {
    edges.forEach((edge, i) => { for (const [at, value] of edge) s[i][at] = value; });
    kernel(RARE, 0, RARE.length, k * RARE.length, s, b);
  }
  const n0 = RARE_CALLS * RARE.length;
  for (let from = 0; from < x.length; from += REHEARSAL_CALL) kernel(x, from, Math.min(x.length, from + REHEARSAL_CALL), n0 + from, s, b);
}

/** The channel's accumulator under `key`, shared by every stage that asks for it (made by `make` the first time). */
export function fusedOf<A extends Accumulator>(ctx: ChannelContext, key: string, make: () => A): A {
  return ctx.shared('fused-pass', () => new FusedPass()).joinOrMake(key, make);
}
