// The pulse train's first rhythm against random stray pulses: a shaft at 1200 rpm whose pulse times are known by construction,
// with one stray pulse in every revolution at a random phase. The speed of a train of known period is 60 / (period × pulses_per_rev)
// rpm (common practice), so every good interval must be a true one and the speed exactly 1200 rpm, whatever the strays' phases.
import { describe, expect, it } from 'vitest';
import { PulseTrain } from '../stages/dsp/pulse-train.js';
import { uniform } from './dsp-signals.js';

const RPM = 1200;

/**
 * Edge times (s) of `revolutions` revolutions at RPM, `ppr` pulses a revolution from 0.1 pulse period on, and one stray a
 * revolution after its first pulse at a phase uniform in [0.1, 0.9] of a pulse period (clear of the true pulses, so it is a pulse of its own).
 */
function strayTrain(seed: number, ppr: number, revolutions: number) {
  const u = uniform(seed), period = 60 / (RPM * ppr);
  const pulses: number[] = [], all: number[] = [];
  for (let k = 0; k < revolutions; k++) {
    for (let j = 0; j < ppr; j++) pulses.push((k * ppr + j + 0.1) * period);
    all.push(...pulses.slice(-ppr), (k * ppr + 0.1 + 0.1 + 0.8 * u()) * period);
  }
  return { pulses, edges: all.sort((a, b) => a - b), end: (revolutions * ppr + 0.05) * period };
}

function sortTrain(edges: number[], ppr: number, end: number) {
  const good: [number, number][] = [];
  let extra = 0, lost = 0;
  const train = new PulseTrain(ppr, { interval: (a, b) => { good.push([a, b]); }, missing: () => { lost++; }, extra: () => { extra++; }, irregular: () => { lost++; } });
  for (const t of edges) train.edge(t);
  train.end(end);
  return { good, extra, lost };
}

describe('a stray pulse in every revolution at a random phase', () => {
  it('1000 seeded patterns, 1 and 2 pulses a revolution: every true interval good, every stray extra (the last one maybe irregular), 1200 rpm', () => {
    for (const ppr of [1, 2]) {
      const wrong: number[] = [];
      for (let seed = 1; seed <= 1000; seed++) {
        const { pulses, edges, end } = strayTrain(seed, ppr, 60);
        const { good, extra, lost } = sortTrain(edges, ppr, end);
        const span = good.reduce((s, [a, b]) => s + b - a, 0);
        const rpm = (60 * good.length) / (ppr * span);
        // The last stray, past the tolerance after the last true pulse, has nothing after it to tell it from an early pulse: irregular.
        const right = good.length === pulses.length - 1 && good.every(([a, b], i) => a === pulses[i] && b === pulses[i + 1])
          && extra + lost === 60 && lost <= 1 && Math.abs(rpm / RPM - 1) < 1e-9;
        if (!right) wrong.push(seed);
      }
      expect(wrong, `pulses_per_rev ${ppr}: seeds whose train locked onto a wrong rhythm`).toEqual([]);
    }
  });
});
