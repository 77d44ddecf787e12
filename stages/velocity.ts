// Velocity RMS of acceleration channels by integration in the frequency domain: velocity PSD = acceleration PSD / (2πf)².
// Broadband velocity in a 10–1000 Hz band is the figure machine-vibration evaluation uses (ISO 20816-1, from memory).
import { metresPerSecond2 } from './acceleration-units.js';
import { bandMeanSquare, type WelchOptions } from './dsp/welch.js';
import { hzName } from './names.js';
import { spectrumOf } from './spectrum.js';
import type { StageDefinition } from './stage.js';

// Integration in the frequency domain: velocity's power is acceleration's divided by (2πf)²; DC carries none.
const velocityPerAcceleration = (f: number): number => (f > 0 ? 1 / (2 * Math.PI * f) ** 2 : 0);

export interface VelocityOptions { ranges: [number, number][]; spectrum: WelchOptions }

const col = (lo: number, hi: number) => `velocity_${hzName(lo)}_${hzName(hi)}_rms`;

export const velocity: StageDefinition<VelocityOptions> = {
  group: 'velocity_bands',
  columns: (o) => o.ranges.map(([lo, hi]) => ({ name: col(lo, hi), unit: 'mm/s', description: `Velocity RMS in [${lo}, ${hi}) Hz of an acceleration channel, integrated in the frequency domain from the Welch PSD.` })),
  create(ctx, o) {
    const s = spectrumOf(ctx, o.spectrum);
    const factor = metresPerSecond2(ctx.unit);
    return {
      push() {},
      finish() {
        const out: Record<string, number | null> = Object.fromEntries(o.ranges.map(([lo, hi]) => [col(lo, hi), null]));
        if (ctx.quantity !== 'acceleration') return out;
        if (factor === undefined) {
          ctx.note(`${ctx.name}: unit "${ctx.unit}" is not an acceleration unit quern converts (m/s^2, mm/s^2, g); velocity left empty`);
          return out;
        }
        const psd = s.psd();
        if (!psd) return out;
        for (const [lo, hi] of o.ranges) {
          if (hi > ctx.sampleRate / 2) { ctx.note(`${ctx.name}: velocity band ${lo}–${hi} Hz reaches above the Nyquist frequency; left empty`); continue; }
          // DC carries no velocity; every other bin is divided by (2πf)².
          const ms = bandMeanSquare(psd, lo, hi, velocityPerAcceleration);
          out[col(lo, hi)] = Math.sqrt(ms) * factor * 1000; // m/s → mm/s
          const near = nearLowEdge(psd.df, lo, hi, ms, (a, b) => bandMeanSquare(psd, a, b, velocityPerAcceleration));
          if (near != null) ctx.note(`${ctx.name}: velocity band ${lo}–${hi} Hz: ${Math.round(near * 100)} % of its velocity lies within two spectrum bins (${psd.df.toPrecision(3)} Hz each) of its lower edge, where the window's leakage, weighted by 1/(2πf)², makes it uncertain by tens of per cent; choose a spectrum segment long enough for bins of ${(lo / 10).toPrecision(2)} Hz or less`);
        }
        return out;
      },
    };
  },
};

/**
 * The share of a band's velocity within two bins of its lower edge, when it is large (over 10 %) and the edge lies within
 * ten bins of DC; else null. There a Hann window's main lobe (four bins wide) spreads a tone across the edge and the
 * 1/(2πf)² weight magnifies the lower bins, so a tone near the edge reads tens of per cent off (measured against the
 * tone's A/(2πf·√2); the thresholds are our choice).
 */
export function nearLowEdge(df: number, lo: number, hi: number, total: number, meanSquare: (a: number, b: number) => number): number | null {
  if (!(total > 0) || lo >= 10 * df) return null;
  const share = meanSquare(lo, Math.min(hi, lo + 2 * df)) / total;
  return share > 0.1 ? share : null;
}
