// Fixed time windows: mean, RMS and peak per window (and a tacho channel's shaft speed), into windows.parquet. Each
// window's figures are of its finite samples; a window with none has none (null).
import { fixedWindowsOf } from './fused/fixed-windows.js';
import { missingOf } from './fused/missing.js';
import { PackedRows } from './packed-rows.js';
import { speedOf, SPEED_DEFAULTS, type SpeedOptions } from './shaft-speed.js';
import { appenderOf, type StageDefinition } from './stage.js';

/** `speed`: when a tacho channel's speed is withheld (its rows' speed_rpm then null), as for its row. */
export interface WindowOptions { length_s: number; hop_s: number; speed?: SpeedOptions }

/** A row's values in windows.parquet, in order; a tacho channel's rows add `speed_rpm`. */
const VALUES = ['window_start_s', 'window_s', 'mean', 'rms', 'peak'] as const;

/** Mean square, sum and peak of a ring's samples, the finite ones only (`finite` counts them): for windows that hold a missing sample. */
function finiteFigures(ring: Float64Array, out: Float64Array): void {
  let sum = 0, sq = 0, peak = 0, m = 0;
  for (let j = 0; j < ring.length; j++) {
    const v = ring[j];
    if (v - v !== 0) continue;
    sum += v; sq += v * v; m++;
    const a = v < 0 ? -v : v; if (a > peak) peak = a;
  }
  out[0] = sum; out[1] = sq; out[2] = peak; out[3] = m;
}

export const windows: StageDefinition<WindowOptions> = {
  group: 'windows',
  section: 'windows',
  spectral: false,
  columns: () => [],
  create(ctx, o) {
    const length = Math.max(1, Math.round(o.length_s * ctx.sampleRate));
    const hop = Math.max(1, Math.round(o.hop_s * ctx.sampleRate));
    // A window's speed is known only once the pulses after it are in, so a tacho channel's rows wait for finish(), packed.
    const speedIn = ctx.tacho ? speedOf(ctx, o.speed ?? SPEED_DEFAULTS).windows(length, hop) : null;
    const held = new PackedRows(), heldColumns = held.columnsOf(VALUES);
    const append = speedIn ? null : appenderOf(ctx, 'windows', VALUES);
    // One array of a row's values, filled again for each window: a row costs no object.
    const values: (number | null)[] = [0, 0, 0, 0, 0, null];
    const row = (sum: number, sq: number, peak: number, end: number, finite: number) => {
      values[0] = (end - length) / ctx.sampleRate; values[1] = length / ctx.sampleRate;
      values[2] = finite > 0 ? sum / finite : null; values[3] = finite > 0 ? Math.sqrt(sq / finite) : null; values[4] = finite > 0 ? peak : null;
      if (append) append(values); else held.addValues(0, heldColumns, values);
    };
    let seen = 0;
    // Back-to-back windows are summed in the channel's fused pass; overlapping or spaced ones from a ring of the last window.
    if (hop === length) fixedWindowsOf(ctx, length).listen(row);
    const ring = hop === length ? null : new Float64Array(length);
    // The ring's windows take the finite-only sum only while a missing sample lies within the last window: found once a chunk.
    const missing = ring ? missingOf(ctx) : null;
    const figures = new Float64Array(4);
    let lastMissing = -Infinity;
    let at = 0, nextEnd = length;
    return {
      push(x) {
        if (!ring) { seen += x.length; return; }
        if (missing!.inChunk > 0) for (let i = x.length - 1; i >= 0; i--) if (x[i] - x[i] !== 0) { lastMissing = seen + i; break; }
        for (let i = 0; i < x.length; i++) {
          ring[at] = x[i];
          if (++at === length) at = 0;
          if (++seen === nextEnd) {
            if (lastMissing >= seen - length) { finiteFigures(ring, figures); row(figures[0], figures[1], figures[2], seen, figures[3]); }
            else {
              let sum = 0, sq = 0, peak = 0;
              for (let j = 0; j < length; j++) { const v = ring[j]; sum += v; sq += v * v; const a = v < 0 ? -v : v; if (a > peak) peak = a; }
              row(sum, sq, peak, seen, length);
            }
            nextEnd += hop;
          }
        }
      },
      finish() {
        if (seen < length) ctx.note(`${ctx.name}: shorter (${(seen / ctx.sampleRate).toFixed(3)} s) than one ${o.length_s} s window; no window rows`);
        if (speedIn) {
          const withSpeed = appenderOf(ctx, 'windows', [...VALUES, 'speed_rpm']);
          for (let j = 0; j < held.length; j++) {
            for (let v = 0; v < VALUES.length; v++) values[v] = held.value(heldColumns[v], j);
            values[5] = speedIn(j);
            withSpeed(values);
          }
        }
        return {};
      },
    };
  },
};
