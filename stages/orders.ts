// Order figures: RMS in bands of ±width orders around multiples of the measured shaft speed, from the channel's Welch spectrum.
import { bandMeanSquare, type WelchOptions } from './dsp/welch.js';
import type { WindowName } from './dsp/window.js';
import { hzName } from './names.js';
import { shaftSpeedsOf, speedOf, SPEED_DEFAULTS, type SpeedOptions } from './shaft-speed.js';
import { spectrumOf } from './spectrum.js';
import type { StageDefinition } from './stage.js';

/** `speed`: when the tacho's speed is withheld (the order figures then null), as for the tacho's row. */
export interface OrderOptions { orders: number[]; width: number; spectrum: WelchOptions; speed?: SpeedOptions }

/** Half-width of the window's main lobe in bins (Harris, Proc. IEEE 66(1), 1978): a steady tone's power lies within it. */
const MAIN_LOBE_BINS: Record<WindowName, number> = { hann: 2, hamming: 2, boxcar: 1 };

// Order numbers are written like frequencies in column names: '.' as 'p' (order_0p5_rms).
const col = (n: number) => `order_${hzName(n)}_rms`;
const rpm = (v: number) => v.toFixed(1);

/**
 * Whether order n stays inside its band over the whole recording: the line sweeps n·[slowest, fastest] shaft rate, and with
 * the window's main lobe around it must stay within (n ± width) × the mean rate. Without computed order tracking (resampling
 * to shaft angle) a wider sweep smears the order over neighbouring bands, so the figure is not defined.
 */
export function orderHeld(n: number, width: number, meanHz: number, minHz: number, maxHz: number, lobeHz: number): boolean {
  const room = width * meanHz - lobeHz;
  return n * (maxHz - meanHz) <= room && n * (meanHz - minHz) <= room;
}

export const orders: StageDefinition<OrderOptions> = {
  group: 'orders',
  columns: (o) => o.orders.map((n) => ({
    name: col(n), unit: '[unit]',
    description: `RMS within ±${o.width} orders of order ${n} (${n} × the mean shaft speed of the recording's tacho channel), from the Welch PSD; null when the speed varied too much for the band, or on the tacho channel.`,
  })),
  create(ctx, o) {
    const blank = () => Object.fromEntries(o.orders.map((n) => [col(n), null]));
    // The tacho channel has no orders of its own; it makes its speed for the others.
    if (ctx.tacho) { speedOf(ctx, o.speed ?? SPEED_DEFAULTS); return { push() {}, finish: blank }; }
    const s = spectrumOf(ctx, o.spectrum);
    return {
      push() {},
      finish() {
        const tachos = shaftSpeedsOf(ctx);
        if (!tachos.length) {
          ctx.note('orders: no channel of this recording declares pulses_per_rev; order figures left empty (null)');
          return blank();
        }
        const tacho = tachos[0];
        if (tachos.length > 1) ctx.note(`orders: several tacho channels (${tachos.map((t) => t.channel).join(', ')}); order figures follow ${tacho.channel}`);
        const speed = tacho.summary();
        const psd = s.psd();
        if (!psd) {
          ctx.note(`orders: no spectrum of ${ctx.name} (see its spectrum note); order figures left empty (null)`);
          return blank();
        }
        if (speed.meanRpm == null || speed.minRpm == null || speed.maxRpm == null) {
          ctx.note(`orders: no shaft speed from ${tacho.channel}${speed.withheld ? ' (its pulse train does not hold together)' : ''}; order figures left empty (null)`);
          return blank();
        }
        const f = speed.meanRpm / 60, lobe = MAIN_LOBE_BINS[o.spectrum.window] * ctx.sampleRate / psd.length;
        const out: Record<string, number | null> = {};
        const above: number[] = [], swept: number[] = [];
        for (const n of o.orders) {
          const low = (n - o.width) * f, high = (n + o.width) * f;
          const inside = high <= ctx.sampleRate / 2;
          const held = orderHeld(n, o.width, f, speed.minRpm / 60, speed.maxRpm / 60, lobe);
          if (!inside) above.push(n);
          else if (!held) swept.push(n);
          out[col(n)] = inside && held ? Math.sqrt(bandMeanSquare(psd, Math.max(0, low), high)) : null;
        }
        if (above.length) ctx.note(`${ctx.name}: order ${above.join(', ')} at ${rpm(speed.meanRpm)} rpm reaches above the Nyquist frequency ${ctx.sampleRate / 2} Hz; left empty (null)`);
        if (swept.length && o.width * f <= lobe) {
          ctx.note(`${ctx.name}: order bands of ±${o.width} orders (${(o.width * f).toFixed(2)} Hz at ${rpm(speed.meanRpm)} rpm) are narrower than the spectrum window's main lobe (${lobe.toFixed(2)} Hz); order figures left empty (null); lengthen spectrum.segment or widen the orders' width`);
        } else if (swept.length) {
          ctx.note(`${ctx.name}: order ${swept.join(', ')} not defined: the shaft speed ranged ${rpm(speed.minRpm)}–${rpm(speed.maxRpm)} rpm, moving the order beyond its ±${o.width}-order band (${(o.width * f).toFixed(2)} Hz, less the window's main lobe of ${lobe.toFixed(2)} Hz); left empty (null), as quern does no order tracking; reduce steadier stretches or widen the orders' width`);
        }
        return out;
      },
    };
  },
};

/** The tacho's part in the orders group, whichever channels the group's `only` selects, so the group is complete when computed alone. */
export const orderTacho: StageDefinition<SpeedOptions> = {
  group: 'orders',
  columns: () => [],
  create(ctx, o = SPEED_DEFAULTS) {
    if (ctx.tacho) speedOf(ctx, o);
    return { push() {}, finish: () => ({}) };
  },
};
