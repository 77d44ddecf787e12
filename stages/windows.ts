// Fixed time windows: mean, RMS and peak per window (and a tacho channel's shaft speed), into windows.parquet.
import { fixedWindowsOf } from './fused/fixed-windows.js';
import { speedOf } from './shaft-speed.js';
import type { StageDefinition } from './stage.js';

export interface WindowOptions { length_s: number; hop_s: number }

export const windows: StageDefinition<WindowOptions> = {
  group: 'windows',
  columns: () => [],
  create(ctx, o) {
    const length = Math.max(1, Math.round(o.length_s * ctx.sampleRate));
    const hop = Math.max(1, Math.round(o.hop_s * ctx.sampleRate));
    // A window's speed is known only once the pulses after it are in, so a tacho channel's rows wait for finish().
    const speedIn = ctx.tacho ? speedOf(ctx).windows(length, hop) : null;
    const held: Record<string, number>[] = [];
    const emit = (row: Record<string, number>) => (speedIn ? held.push(row) : ctx.addRow('windows', row));
    const row = (sum: number, sq: number, peak: number, end: number) =>
      emit({ window_start_s: (end - length) / ctx.sampleRate, window_s: length / ctx.sampleRate, mean: sum / length, rms: Math.sqrt(sq / length), peak });
    let seen = 0;
    // Back-to-back windows are summed in the channel's fused pass; overlapping or spaced ones from a ring of the last window.
    if (hop === length) fixedWindowsOf(ctx, length).listen(row);
    const ring = hop === length ? null : new Float64Array(length);
    let at = 0, nextEnd = length;
    return {
      push(x) {
        if (!ring) { seen += x.length; return; }
        for (let i = 0; i < x.length; i++) {
          ring[at] = x[i];
          if (++at === length) at = 0;
          if (++seen === nextEnd) {
            let sum = 0, sq = 0, peak = 0;
            for (let j = 0; j < length; j++) { const v = ring[j]; sum += v; sq += v * v; const a = v < 0 ? -v : v; if (a > peak) peak = a; }
            row(sum, sq, peak, seen);
            nextEnd += hop;
          }
        }
      },
      finish() {
        if (seen < length) ctx.note(`${ctx.name}: shorter (${(seen / ctx.sampleRate).toFixed(3)} s) than one ${o.length_s} s window; no window rows`);
        held.forEach((r, j) => ctx.addRow('windows', { ...r, speed_rpm: speedIn!(j) }));
        return {};
      },
    };
  },
};
