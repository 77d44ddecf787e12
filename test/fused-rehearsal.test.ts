// The fused kernel's rehearsal (stages/fused/pass.ts): every branch a channel's data can take is seen before V8 optimises
// the kernel, so a real run never sends it back to the interpreter (a deoptimisation) part-way through a recording.
import { spawnSync } from 'node:child_process';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';
import { FiniteWindows } from '../stages/fused/finite-windows.js';
import { FixedWindows } from '../stages/fused/fixed-windows.js';
import { Histogram } from '../stages/fused/histogram.js';
import { RunningMeanSquare } from '../stages/fused/running-mean-square.js';
import { FusedPass } from '../stages/fused/pass.js';
import type { Accumulator } from '../stages/fused/accumulator.js';
import { quernUnder, removeTempDirs, repo, sampleArchiveCopy, tempDir } from './helpers.js';

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

  // V8's choice to optimise counts the work a function has done, which is the same in every run; when its compiler then
  // reads the feedback races with the thread, so a kernel chosen too early failed in about one run of twelve (1 s windows
  // at 48 kHz). Its choice is checked here instead: not before the first call over the rare values has ended.
  it('is not chosen for optimisation before its first call over the rare values has seen every branch', () => {
    const dist = (p: string) => pathToFileURL(join(repo, 'dist', 'stages', 'fused', p)).href;
    const script = join(tempDir(), 'rehearse.mjs');
    writeFileSync(script, `
import { writeSync } from 'node:fs';
import { FusedPass } from '${dist('pass.js')}';
import { MomentsAccumulator } from '${dist('moments.js')}';
import { FixedWindows } from '${dist('fixed-windows.js')}';
import { FiniteWindows } from '${dist('finite-windows.js')}';
import { RunningMeanSquare } from '${dist('running-mean-square.js')}';
import { Histogram } from '${dist('histogram.js')}';
import { RepeatRuns } from '${dist('repeat-runs.js')}';
// What a 48 kHz channel's statistics and flags join: 1 s windows, the 1 s running mean square, 0.1 s finite windows.
const pass = new FusedPass();
for (const a of [new MomentsAccumulator(), new FixedWindows(48000), new RunningMeanSquare(48000), new FiniteWindows(4800), new Histogram(null, 120), new RepeatRuns(480)]) pass.joinOrMake(a.key, () => a);
// Says, at the last of the nine rare values of the first call (n = 8), that the call has ended.
globalThis.firstRareCallEnds = () => writeSync(1, 'first rare call ended\\n');
pass.joinOrMake('marker', () => ({ key: 'marker', names: [], state: new Float64Array(0), each: 'if (n === 8) firstRareCallEnds();' }));
let seed = 7;
const x = new Float64Array(65536).map(() => ((seed = (seed * 16807) % 2147483647) / 2147483647 - 0.5));
for (let k = 0; k < 8; k++) pass.push(x);
`);
    const r = spawnSync(process.execPath, ['--trace-opt', script], { encoding: 'utf8' });
    expect(r.status, r.stderr).toBe(0);
    const lines = r.stdout.split('\n');
    const ended = lines.indexOf('first rare call ended');
    const chosen = lines.findIndex((l) => l.startsWith('[marking') && l.includes('fusedKernel'));
    expect(ended).toBeGreaterThanOrEqual(0);
    expect(chosen, 'V8 optimises the kernel in the end (else this test shows nothing)').toBeGreaterThan(0);
    expect(chosen).toBeGreaterThan(ended);
  }, 60_000);

  it('leaves no fused kernel to be deoptimised in a real run of the sample archive', () => {
    const r = quernUnder(['--trace-deopt'], 'reduce', sampleArchiveCopy(), '--out', join(tempDir(), 'out'), '--jobs', '1');
    expect(r.code, r.stderr).toBeLessThanOrEqual(1); // the sample archive plants one truncated recording
    const deopts = r.stdout.split('\n').filter((l) => l.startsWith('[bailout (kind:'));
    expect(deopts.length).toBeGreaterThan(0); // V8's trace is there: other code is deoptimised now and then
    expect(deopts.filter((l) => l.includes('fusedKernel'))).toEqual([]);
  }, 60_000);
});
