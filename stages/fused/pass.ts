// The fused pass: every element-wise accumulator of a channel walks each chunk in one loop, not one loop per stage.
// Stages declare the accumulators they read (fusedOf); the pass, a shared product of the channel, joins their
// per-sample statements into one kernel, compiled once per thread for each set of accumulator kinds.
import type { ChannelContext, Stage } from '../stage.js';
import type { Accumulator } from './accumulator.js';

type Kernel = (x: Float64Array, n0: number) => void;
type KernelFactory = (...bindings: unknown[]) => Kernel;

// Kernels depend only on the statements joined, not on a channel's values: made once per thread and shared.
const factories = new Map<string, KernelFactory>();

/** The JavaScript source of one loop running every accumulator's statements, and the names it binds. */
export function kernelSource(accs: readonly Accumulator[]): { params: string[]; body: string } {
  const params: string[] = [];
  const load: string[] = [], store: string[] = [], each: string[] = [], finite: string[] = [];
  accs.forEach((a, i) => {
    const local = (name: string) => `a${i}_${name}`;
    const rename = (code: string) => code.replace(/\$(\w+)/g, (_, name: string) => {
      if (!a.names.includes(name) && !(a.arrays && name in a.arrays) && !(a.calls && name in a.calls)) throw new Error(`accumulator ${a.key}: $${name} is not declared`);
      return local(name);
    });
    params.push(`s${i}`);
    a.names.forEach((name, k) => { load.push(`let ${local(name)} = s${i}[${k}];`); store.push(`s${i}[${k}] = ${local(name)};`); });
    for (const name of Object.keys(a.arrays ?? {})) params.push(local(name));
    for (const name of Object.keys(a.calls ?? {})) params.push(local(name));
    if (a.each) each.push(`{ ${rename(a.each)} }`);
    if (a.finite) finite.push(`{ ${rename(a.finite)} }`);
  });
  const body = `return function fusedKernel(x, n0) {
  ${load.join('\n  ')}
  for (let i = 0, len = x.length; i < len; i++) {
    const v = x[i], n = n0 + i;
    ${each.join('\n    ')}
    ${finite.length ? `if (v - v === 0) {\n      ${finite.join('\n      ')}\n    }` : ''}
  }
  ${store.join('\n  ')}
};`;
  return { params, body };
}

/** Runs a channel's accumulators over each chunk in one loop; a shared product, fed before the stages. */
export class FusedPass implements Stage {
  private readonly accs: Accumulator[] = [];
  private kernel: Kernel | null = null;
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

  private compile(): Kernel {
    const { params, body } = kernelSource(this.accs);
    let factory = factories.get(body);
    if (!factory) {
      factory = new Function(...params, body) as KernelFactory;
      factories.set(body, factory);
    }
    const bindings = this.accs.flatMap((a) => [a.state, ...Object.values(a.arrays ?? {}), ...Object.values(a.calls ?? {})]);
    return factory(...bindings);
  }

  push(x: Float64Array): void {
    const kernel = (this.kernel ??= this.compile());
    const accs = this.accs, n0 = this.n0;
    for (let i = 0; i < accs.length; i++) accs[i].beforeChunk?.(x, n0);
    kernel(x, n0);
    for (let i = 0; i < accs.length; i++) accs[i].afterChunk?.(x, n0);
    this.n0 += x.length;
  }

  finish() { return {}; }
}

/** The channel's accumulator under `key`, shared by every stage that asks for it (made by `make` the first time). */
export function fusedOf<A extends Accumulator>(ctx: ChannelContext, key: string, make: () => A): A {
  return ctx.shared('fused-pass', () => new FusedPass()).joinOrMake(key, make);
}
