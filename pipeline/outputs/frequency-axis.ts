// A logarithmic frequency axis for the report's spectra: machines' spectra span decades, which a linear axis crowds into its
// first tick. A log axis cannot show 0 Hz, so the pictures leave the DC bin out and say so under their title.

export const FREQUENCY_TITLE = 'frequency (log scale)';

/** The pictures' subtitle: short, so a narrow spectrogram's title stays within it. */
export const NO_DC = '0 Hz bin not shown';

/** Tick labels with their unit: Hz below 1 kHz, kHz from there. */
export const FREQUENCY_LABELS = 'datum.value >= 1000 ? format(datum.value / 1000, \'~g\') + \' kHz\' : format(datum.value, \'~g\') + \' Hz\'';

/**
 * Tick values between lo and hi (Hz, lo > 0): 1-2-5 in each decade, or decades only where that gives more than `most`
 * (every other decade beyond), finer steps where a span under a decade would have fewer than two.
 */
export function frequencyTicks(lo: number, hi: number, most = 8): number[] {
  const within = (steps: number[], everyDecade = 1) => {
    const out: number[] = [];
    for (let e = Math.floor(Math.log10(lo)); e <= Math.ceil(Math.log10(hi)); e++) {
      if (e % everyDecade) continue;
      // Through a string, so 3 × 10⁻¹ is 0.3, not 0.30000000000000004.
      for (const s of steps) { const v = Number(`${s}e${e}`); if (v >= lo * (1 - 1e-9) && v <= hi * (1 + 1e-9)) out.push(v); }
    }
    return out;
  };
  for (const steps of [[1, 2, 5], [1]]) { const t = within(steps); if (t.length <= most && t.length >= 2) return t; }
  const fine = within([1, 1.5, 2, 3, 4, 5, 6, 8]);
  if (fine.length >= 2 && fine.length <= most) return fine;
  if (fine.length < 2) return fine.length ? fine : [lo, hi];
  for (let every = 2; ; every++) { const t = within([1], every); if (t.length <= most) return t; }
}

/** The x or y channel's scale and axis of a logarithmic frequency axis over [lo, hi] Hz. */
export function frequencyScale(lo: number, hi: number) {
  return {
    scale: { type: 'log' as const, domain: [lo, hi], nice: false },
    axis: { values: frequencyTicks(lo, hi), labelExpr: FREQUENCY_LABELS, grid: true },
    title: FREQUENCY_TITLE,
  };
}
