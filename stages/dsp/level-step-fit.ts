// The slow part of a sequence of window means that an offset and its changes can take: a level, a straight line and one step.

/** The fit: the sum of squares it takes from the means, what a line alone and a step alone take beyond the level, and that step. */
export interface LevelStepFit {
  /** Σ f² over the windows, f the fitted values: the part of Σ m² the level, the line and the step carry. */
  explained: number;
  /** What the level alone takes, (Σm)²/W: the only part that changes when a constant is added to every mean. */
  level: number;
  /** Beyond the level: what the line alone takes, and what the best step alone takes. */
  line: number;
  stepAlone: number;
  /** Where the best step alone starts (its first window past it), or -1 without one, and its height in the means' unit. */
  stepAt: number;
  step: number;
}

// Least squares on the regressors 1, k − k̄ and a unit step at s, the step's place chosen to take the most (the least-squares
// single change point, Hinkley 1970, from memory, here beside a line). The regressors made orthogonal in that order
// (Gram–Schmidt), the fit takes (Σm)²/W + (Σ(k−k̄)m)²/Σ(k−k̄)² + R²/D, where D and R are the step's sum of squares and its
// co-moment with m once the level and the line are taken out; suffix sums give every s in one pass.
export function levelStepFit(means: ArrayLike<number>, count = means.length): LevelStepFit {
  const W = count;
  if (W === 0) return { explained: 0, level: 0, line: 0, stepAlone: 0, stepAt: -1, step: 0 };
  const centre = (W - 1) / 2;
  let sm = 0, scm = 0, scc = 0;
  for (let k = 0; k < W; k++) { const c = k - centre; sm += means[k]; scm += c * means[k]; scc += c * c; }
  const line = scc > 0 ? (scm * scm) / scc : 0;
  let best = 0, alone = 0, stepAt = -1, step = 0;
  // Suffix sums over k ≥ s: how many, Σ(k − k̄), Σm.
  let u = 0, uc = 0, um = 0;
  for (let s = W - 1; s >= 1; s--) {
    u += 1; uc += s - centre; um += means[s];
    // The step beside the level alone: its own best place and height, for naming it where it takes more than a line.
    const d0 = u - (u * u) / W, r0 = um - (u * sm) / W;
    if (d0 > 1e-9 * u && (r0 * r0) / d0 > alone) { alone = (r0 * r0) / d0; stepAt = s; step = r0 / d0; }
    const d = u - (u * u) / W - (scc > 0 ? (uc * uc) / scc : 0);
    // A step the level and the line already make (two windows) takes nothing more.
    if (!(d > 1e-9 * u)) continue;
    const r = um - (u * sm) / W - (scc > 0 ? (uc * scm) / scc : 0);
    best = Math.max(best, (r * r) / d);
  }
  const level = (sm * sm) / W;
  return { explained: level + line + best, level, line, stepAlone: alone, stepAt, step };
}
