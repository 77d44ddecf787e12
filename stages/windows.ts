// Fixed time windows: mean, RMS and peak per window (and a tacho channel's shaft speed), into windows.parquet.
import { speedOf } from './shaft-speed.js';
import type { StageDefinition } from './stage.js';

export interface WindowOptions { length_s: number; hop_s: number }

export const windows: StageDefinition<WindowOptions> = {
  group: 'windows',
  columns: () => [],
  create(ctx, o) {
    const length = Math.max(1, Math.round(o.length_s * ctx.sampleRate));
    const hop = Math.max(1, Math.round(o.hop_s * ctx.sampleRate));
    const ring = new Float64Array(length);
    let seen = 0, at = 0, nextEnd = length;
    // A window's speed is known only once the pulses after it are in, so a tacho channel's rows wait for finish().
    const speedIn = ctx.tacho ? speedOf(ctx).windows(length, hop) : null;
    const held: Record<string, number>[] = [];
    const emit = (row: Record<string, number>) => (speedIn ? held.push(row) : ctx.addRow('windows', row));
    return {
      push(x) {
        for (let i = 0; i < x.length; i++) {
          ring[at] = x[i];
          if (++at === length) at = 0;
          if (++seen === nextEnd) {
            let sum = 0, sq = 0, peak = 0;
            for (let j = 0; j < length; j++) { const v = ring[j]; sum += v; sq += v * v; const a = v < 0 ? -v : v; if (a > peak) peak = a; }
            emit({ window_start_s: (seen - length) / ctx.sampleRate, window_s: length / ctx.sampleRate, mean: sum / length, rms: Math.sqrt(sq / length), peak });
            nextEnd += hop;
          }
        }
      },
      finish() {
        if (seen < length) ctx.note(`${ctx.name}: shorter (${(seen / ctx.sampleRate).toFixed(3)} s) than one ${o.length_s} s window; no window rows`);
        held.forEach((row, j) => ctx.addRow('windows', { ...row, speed_rpm: speedIn!(j) }));
        return {};
      },
    };
  },
};
