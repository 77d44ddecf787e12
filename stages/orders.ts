// Order figures: RMS in bands of ±width orders around multiples of the measured shaft speed, from the channel's Welch spectrum,
// or for a slow shaft from a finer one of the channel's every D-th sample.
import { decimatedSpan, lastHalving, settlingOutputs } from './dsp/decimate.js';
import { LONGEST_SEGMENT } from './dsp/leakage.js';
import { bandMeanSquare, resolutionOf, type Psd, type WelchOptions } from './dsp/welch.js';
import type { WindowName } from './dsp/window.js';
import { hzName } from './names.js';
import { shaftSpeedsOf, speedOf, SPEED_DEFAULTS, type SpeedOptions } from './shaft-speed.js';
import { spectrumOf } from './spectrum.js';
import type { StageDefinition } from './stage.js';

/**
 * `min_rpm`: the lowest shaft speed whose order bands a finer spectrum is taken for (`lowSpeedSpectrum`).
 * `speed`: when the tacho's speed is withheld (the order figures then null), as for the tacho's row.
 */
export interface OrderOptions { orders: number[]; width: number; min_rpm: number; spectrum: WelchOptions; speed?: SpeedOptions }

/** Default lowest shaft speed served, rpm: two revolutions a second, below most geared output shafts (our choice). */
export const MIN_RPM = 120;

/** Half-width of the window's main lobe in bins (Harris, Proc. IEEE 66(1), 1978): a steady tone's power lies within it. */
const MAIN_LOBE_BINS: Record<WindowName, number> = { hann: 2, hamming: 2, boxcar: 1 };

// Order numbers are written like frequencies in column names: '.' as 'p' (order_0p5_rms).
const col = (n: number) => `order_${hzName(n)}_rms`;
const rpm = (v: number) => v.toFixed(1);

/** Main-lobe half-width, Hz, of a spectrum: lobe bins × its resolution (its rate over the samples a periodogram spans). */
const lobeOf = (p: Psd, window: WindowName) => MAIN_LOBE_BINS[window] * resolutionOf(p);

/**
 * Whether order n stays inside its band over the whole recording: the line sweeps n·[slowest, fastest] shaft rate, and with
 * the window's main lobe around it must stay within (n ± width) × the mean rate. Without computed order tracking (resampling
 * to shaft angle) a wider sweep smears the order over neighbouring bands, so the figure is not defined.
 */
export function orderHeld(n: number, width: number, meanHz: number, minHz: number, maxHz: number, lobeHz: number): boolean {
  const room = width * meanHz - lobeHz;
  return n * (maxHz - meanHz) <= room && n * (meanHz - minHz) <= room;
}

// Main lobe inside the band (Harris, Proc. IEEE 66(1), 1978), read from multistage decimation (Crochiere & Rabiner 1983, ch. 5).
/**
 * The finer spectrum the orders stage asks for (on channels of recordings with a tacho channel), for shafts from `min_rpm` up
 * to the speed at which the shared segment's main lobe fills the order band (width × rate = lobe; above it the shared
 * spectrum serves): periodograms spanning the shortest power of two whose main lobe fits width × min_rpm / 60, taken at fs/D
 * from every D-th sample of the low-passed channel (`spectrumOf` with D, the octave stage's `lowBandSpectrum` mechanism) with
 * a segment of that span over D. D is the largest power of two up to span/segment that keeps the highest order band it serves,
 * (largest order + width) × that speed, below fs/(6D), where the decimator is flat and free of aliases. Null when the shared
 * segment's lobe already fits min_rpm.
 */
export function lowSpeedSpectrum(o: Pick<OrderOptions, 'orders' | 'width' | 'min_rpm' | 'spectrum'>, fs: number): { segment: number; decimation: number } | null {
  const bins = MAIN_LOBE_BINS[o.spectrum.window], lowest = o.min_rpm / 60;
  const handover = (bins * fs) / o.spectrum.segment / o.width;
  if (lowest >= handover) return null;
  let span = o.spectrum.segment;
  while (span < LONGEST_SEGMENT && (bins * fs) / span > o.width * lowest) span *= 2;
  return decimatedSpan(span, o.spectrum.segment, (Math.max(...o.orders) + o.width) * handover, fs);
}

export const orders: StageDefinition<OrderOptions> = {
  group: 'orders',
  section: 'orders',
  spectral: true,
  columns: (o) => o.orders.map((n) => ({
    name: col(n), unit: '[unit]',
    description: `RMS within ±${o.width} orders of order ${n} (${n} × the mean shaft speed of the recording's tacho channel), from the Welch PSD; null when the speed varied too much for the band, or on the tacho channel.`,
  })),
  create(ctx, o) {
    const blank = () => Object.fromEntries(o.orders.map((n) => [col(n), null]));
    // The tacho channel has no orders of its own; it makes its speed for the others.
    if (ctx.tacho) { speedOf(ctx, o.speed ?? SPEED_DEFAULTS); return { push() {}, finish: blank }; }
    const s = spectrumOf(ctx, o.spectrum);
    // A slow shaft's bands need a finer spectrum, asked for now since the speed is known only at finish; a recording without a
    // tacho channel has no orders, so its channels take none.
    const low = ctx.tachoChannels?.length ? lowSpeedSpectrum(o, ctx.sampleRate) : null;
    const fine = low ? spectrumOf(ctx, { ...o.spectrum, segment: low.segment }, false, low.decimation) : null;
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
        const fs = ctx.sampleRate, win = o.spectrum.window, f = speed.meanRpm / 60, minHz = speed.minRpm / 60, maxHz = speed.maxRpm / 60;
        // Coarsest first, so an order the shared spectrum holds is read from it as before; the finer one is made only when asked.
        const sources = [() => psd, () => fine?.psd() ?? null];
        const out: Record<string, number | null> = {};
        const above: number[] = [], narrow: number[] = [], swept = new Map<string, number[]>();
        let finestNarrow: Psd = psd;
        for (const n of o.orders) {
          const low = (n - o.width) * f, high = (n + o.width) * f;
          out[col(n)] = null;
          if (high > fs / 2) { above.push(n); continue; }
          // The first spectrum that may be read up to the band's top and whose main lobe, swept by the speed's range, stays in the band.
          let from: Psd | null = null, finest: Psd | null = null;
          for (const get of sources) {
            const p = get();
            if (!p || high > (p.upTo ?? Infinity)) continue;
            if (!finest || resolutionOf(p) < resolutionOf(finest)) finest = p;
            if (orderHeld(n, o.width, f, minHz, maxHz, lobeOf(p, win))) { from = p; break; }
          }
          if (from) out[col(n)] = Math.sqrt(bandMeanSquare(from, Math.max(0, low), high));
          else if (o.width * f > lobeOf(finest!, win)) {
            const lobe = lobeOf(finest!, win).toFixed(2);
            swept.set(lobe, [...(swept.get(lobe) ?? []), n]);
          } else {
            narrow.push(n);
            if (resolutionOf(finest!) < resolutionOf(finestNarrow)) finestNarrow = finest!;
          }
        }
        if (above.length) ctx.note(`${ctx.name}: order ${above.join(', ')} at ${rpm(speed.meanRpm)} rpm reaches above the Nyquist frequency ${fs / 2} Hz; left empty (null)`);
        if (narrow.length) ctx.note(narrowNote(ctx.name, narrow, o, f, fs, lobeOf(finestNarrow, win), low));
        for (const [lobe, orders] of swept) {
          ctx.note(`${ctx.name}: order ${orders.join(', ')} not defined: the shaft speed ranged ${rpm(speed.minRpm)}–${rpm(speed.maxRpm)} rpm, moving the order beyond its ±${o.width}-order band (${(o.width * f).toFixed(2)} Hz, less the window's main lobe of ${lobe} Hz); left empty (null), as quern does no order tracking; reduce steadier stretches or widen the orders' width`);
        }
        return out;
      },
    };
  },
};

/**
 * Which order bands no spectrum resolves, and what would: a periodogram spanning enough of the recording (one shorter than
 * a segment is taken of the whole gap-free stretch, so a longer recording resolves them while the speed is within min_rpm),
 * else a lower min_rpm, a longer segment or a wider band.
 */
function narrowNote(name: string, orders: number[], o: OrderOptions, f: number, fs: number, lobe: number, low: { segment: number; decimation: number } | null): string {
  const d = low?.decimation ?? 1, bins = MAIN_LOBE_BINS[o.spectrum.window];
  // Recording samples one periodogram must span for the lobe to fit the band, on the grid of the finer spectrum's samples.
  const needed = d * Math.ceil((bins * fs) / d / (o.width * f));
  const longest = low ? low.segment * d : o.spectrum.segment;
  const what = needed <= longest
    ? `they need gap-free stretches of at least ${needed} samples (${Number((needed / fs).toPrecision(3))} s of recording${d > 1 ? `; after a gap, up to ${d * (settlingOutputs(lastHalving(fs, d)) + 2)} more while the low-pass filter settles` : ''})`
    : `the shaft turns below the speeds the spectra serve (periodograms of at most ${longest} samples${low ? `, made for orders.min_rpm ${o.min_rpm} rpm` : ''}); lower orders.min_rpm, lengthen spectrum.segment or widen the orders' width`;
  return `${name}: order ${orders.join(', ')} bands of ±${o.width} orders (${(o.width * f).toFixed(2)} Hz at ${rpm(60 * f)} rpm) are narrower than the spectrum window's main lobe (${lobe.toFixed(2)} Hz); left empty (null); ${what}`;
}

/** The tacho's part in the orders group, whichever channels the group's `only` selects, so the group is complete when computed alone. */
export const orderTacho: StageDefinition<SpeedOptions> = {
  group: 'orders',
  section: 'orders',
  spectral: false,
  columns: () => [],
  create(ctx, o = SPEED_DEFAULTS) {
    if (ctx.tacho) speedOf(ctx, o);
    return { push() {}, finish: () => ({}) };
  },
};
