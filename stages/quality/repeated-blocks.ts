// Repeated blocks: stretches where the signal repeats itself exactly a whole block back, as a transfer re-sending its last buffer.
import type { StageDefinition } from '../stage.js';
import { scratchOf } from '../stage.js';
import { momentsOf } from '../fused/moments.js';
import { MAX_LAG_TILES, TILE, TileRepeats } from '../dsp/tile-repeats.js';
import { NO_FINITE_SAMPLES, noFiniteSamples, pct, secs, type QualityThresholds, type Severity } from './flag.js';

export const repeatedBlocks: StageDefinition<QualityThresholds> = {
  group: 'quality',
  section: null,
  spectral: false,
  columns: () => [{ name: 'repeated_fraction', unit: '1', description: 'Share of the recording in stretches that repeat exactly the samples a whole block of 64 to 8192 samples (a multiple of 64) before them; null when the channel has no finite samples.' }],
  create(ctx, q) {
    // A tacho's pulse train holds two levels: its tiles may repeat by design, which pulse_train judges.
    const pulses = ctx.tacho != null;
    const shared = momentsOf(ctx);
    const scratch = scratchOf(ctx);
    // Samples repeated at each lag (in tiles), the first stretch and the number of stretches.
    const byLag = new Float64Array(MAX_LAG_TILES + 1);
    let first: { start: number; lag: number } | null = null, stretches = 0, repeated = 0, n = 0;
    const finder = pulses ? null : new TileRepeats((r) => {
      const length = r.end - r.start;
      byLag[r.lag / TILE] += length;
      repeated += length;
      stretches++;
      if (!first) first = { start: r.start, lag: r.lag };
    }, scratch(TileRepeats.ringLength), scratch(TileRepeats.tableLength), scratch(TileRepeats.tableLength));
    return {
      push(x) { n += x.length; finder?.push(x); },
      finish() {
        finder?.end();
        const fs = ctx.sampleRate, periodic = q.repeated_blocks.periodic_fraction;
        const threshold = `warn: any stretch repeating exactly the samples a whole block of ${TILE} to ${MAX_LAG_TILES * TILE} samples (a multiple of ${TILE}) before it, each a whole block or longer, in a signal that does not repeat throughout; ok: at one lag over ≥ ${pct(periodic)} of the recording (a synthetic or looped signal)${pulses ? ' (not judged on a tacho channel)' : ''}`;
        if (noFiniteSamples(n, shared.moments().n)) {
          ctx.flag({ name: 'repeated_blocks', severity: 'ok', value: null, threshold, evidence: {}, message: NO_FINITE_SAMPLES });
          return { repeated_fraction: null };
        }
        const share = n > 0 ? repeated / n : 0;
        let lagTiles = 0;
        for (let k = 1; k <= MAX_LAG_TILES; k++) if (byLag[k] > byLag[lagTiles]) lagTiles = k;
        const atOneLag = n > 0 ? byLag[lagTiles] / n : 0;
        const at = first as { start: number; lag: number } | null;
        let severity: Severity = 'ok';
        let message = pulses ? 'not judged on a tacho channel: its pulse train repeats by design, which pulse_train judges' : 'no stretch repeats a block of the signal exactly';
        if (at && atOneLag >= periodic) {
          message = `repeats exactly every ${lagTiles * TILE} samples (${pct(atOneLag)} of the recording): a synthetic or looped signal, not measured data`;
        } else if (at) {
          severity = 'warn';
          message = `the signal repeats itself exactly in ${stretches === 1 ? 'one stretch' : `${stretches} stretches`}, first at ${secs(at.start / fs)} as the block of ${at.lag} samples before it sent again: ${secs(repeated / fs)} in all, ${pct(share)} of the recording: a transfer re-sending data it had already sent (a DAQ buffer overrun); that stretch is lost data and every figure counts the repeated data as measured (RMS, spectra, window and cycle figures)`;
        }
        ctx.flag({
          name: 'repeated_blocks', severity, value: share, threshold,
          evidence: {
            repeated_samples: repeated, repeated_s: repeated / fs, stretches,
            first_repeat_s: at ? at.start / fs : null, first_block_samples: at ? at.lag : null,
            main_lag_samples: at ? lagTiles * TILE : null, main_lag_fraction: atOneLag,
          },
          message,
        });
        return { repeated_fraction: share };
      },
    };
  },
};
