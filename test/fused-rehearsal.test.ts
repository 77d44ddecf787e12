// The fused kernel's rehearsal (stages/fused/pass.ts): every branch a channel's data can take is seen before V8 optimises
// the kernel, so a real run never sends it back to the interpreter (a deoptimisation) part-way through a recording.
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { FiniteWindows } from '../stages/fused/finite-windows.js';
import { FixedWindows } from '../stages/fused/fixed-windows.js';
import { Histogram } from '../stages/fused/histogram.js';
import { RunningMeanSquare } from '../stages/fused/running-mean-square.js';
import { FusedPass } from '../stages/fused/pass.js';
import type { Accumulator } from '../stages/fused/accumulator.js';
import { quernUnder, removeTempDirs, sampleArchiveCopy, tempDir } from './helpers.js';

afterAll(removeTempDirs);

describe('the fused kernel rehearsal', () => {
  it('starts each accumulator at an edge made of its own state values', () => {
    const withEdges: Accumulator[] = [new FixedWindows(1000), new FiniteWindows(250), new RunningMeanSquare(125), new Histogram(null, 64), new Histogram([-1, 1], 64)];
    for (const a of withEdges) {
      expect(a.edge, a.key).toBeDefined();
      for (const name of Object.keys(a.edge!)) expect(a.names, a.key).toContain(name);
    }
  });

  it('refuses an edge naming a value the accumulator does not have', () => {
    const pass = new FusedPass();
    pass.joinOrMake('odd', () => ({ key: 'odd', names: ['k'], state: Float64Array.of(0), each: '$k++;', edge: { count: 3 } }));
    expect(() => pass.push(new Float64Array(8))).toThrow(/odd: its edge names count/);
  });

  it('leaves no fused kernel to be deoptimised in a real run of the sample archive', () => {
    const r = quernUnder(['--trace-deopt'], 'reduce', sampleArchiveCopy(), '--out', join(tempDir(), 'out'), '--jobs', '1');
    expect(r.code, r.stderr).toBeLessThanOrEqual(1); // the sample archive plants one truncated recording
    const deopts = r.stdout.split('\n').filter((l) => l.startsWith('[bailout (kind:'));
    expect(deopts.length).toBeGreaterThan(0); // V8's trace is there: other code is deoptimised now and then
    expect(deopts.filter((l) => l.includes('fusedKernel'))).toEqual([]);
  }, 60_000);
});
