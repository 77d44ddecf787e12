// A tacho channel's shaft speed: the channel's shared product, published to the recording so its other channels can read it.
import { PulseEdges, type Trigger } from './dsp/pulse-edges.js';
import { PulseTrain } from './dsp/pulse-train.js';
import type { ChannelContext, Stage } from './stage.js';

/** The middle of three values; NaN when the middle one is not a number. */
const medianOfThree = (a: number, b: number, c: number) => (Number.isNaN(b) ? NaN : Math.max(Math.min(a, b), Math.min(Math.max(a, b), c)));

/** Key of the recording's list of tacho products (one per tacho channel, in channel order of creation). */
export const SHAFT_SPEED_KEY = 'shaft-speed';

/** Seconds of signal from which an undeclared trigger level and hysteresis are found. */
export const TRIGGER_LEARN_S = 1;
/** Undeclared hysteresis, as a share of the span of the learning stretch: the edge must cross 30 % and 70 % of it. */
export const TRIGGER_HYSTERESIS_SHARE = 0.4;
/** Times kept per kind of pulse fault, for the notes (the counts are complete). */
const TIMES_KEPT = 10;

export interface PulseFaults { count: number; times_s: number[] }

export interface SpeedSummary {
  /** Trigger used, and whether it was found from the signal (else declared); null when the learning stretch was flat. */
  trigger: Trigger | null;
  found: boolean;
  /** Revolutions over all good intervals / their duration, and the extremes of the per-revolution speed; null without them. */
  meanRpm: number | null;
  minRpm: number | null;
  maxRpm: number | null;
  /** Revolutions the speed figures rest on: good intervals / pulses per revolution. */
  revolutions: number;
  edges: number;
  missing: PulseFaults;
  extra: PulseFaults;
  irregular: PulseFaults;
}

export interface ShaftSpeed extends Stage {
  readonly channel: string;
  /** Complete once every chunk has been pushed (read it in finish()). */
  summary(): SpeedSummary;
  /** Speed per window of `length` samples every `hop` samples; register at create(), read in finish(). Null where no good interval covers it. */
  windows(length: number, hop: number): (index: number) => number | null;
}

/** The tacho products of the channel's recording (none when no channel declares pulses_per_rev, or outside a recording). */
export const shaftSpeedsOf = (ctx: ChannelContext): ShaftSpeed[] => ctx.recordingShared?.(SHAFT_SPEED_KEY, () => [] as ShaftSpeed[]) ?? [];

/** The speed of this tacho channel, made once per channel and published to the recording. */
export function speedOf(ctx: ChannelContext): ShaftSpeed {
  if (!ctx.tacho) throw new Error(`${ctx.name} is not a tacho channel (no pulses_per_rev)`);
  return ctx.shared(SHAFT_SPEED_KEY, () => {
    const product = makeShaftSpeed(ctx.name, ctx.sampleRate, ctx.tacho!);
    shaftSpeedsOf(ctx).push(product);
    return product;
  });
}

const fault = (): PulseFaults => ({ count: 0, times_s: [] });
const record = (f: PulseFaults, t: number) => { f.count++; if (f.times_s.length < TIMES_KEPT) f.times_s.push(t); };

function makeShaftSpeed(channel: string, fs: number, tacho: NonNullable<ChannelContext['tacho']>): ShaftSpeed {
  const p = tacho.pulsesPerRev;
  const s: SpeedSummary = { trigger: null, found: false, meanRpm: null, minRpm: null, maxRpm: null, revolutions: 0, edges: 0, missing: fault(), extra: fault(), irregular: fault() };
  let good = 0, span = 0, fastest = 0, slowest = Infinity, lastEnd = Number.NaN;
  const revolution: number[] = [];
  const grids: { length: number; hop: number; pulses: number[]; time: number[] }[] = [];
  const train = new PulseTrain(p, {
    interval(a, b) {
      good++;
      span += b - a;
      // Any pulses_per_rev consecutive good intervals make one revolution.
      if (a !== lastEnd) revolution.length = 0;
      revolution.push(b - a);
      if (revolution.length > p) revolution.shift();
      if (revolution.length === p) {
        const samples = revolution.reduce((x, v) => x + v, 0);
        fastest = Math.max(fastest, 1 / samples);
        slowest = Math.min(slowest, 1 / samples);
      }
      lastEnd = b;
      // Each window takes the share of the interval inside it, at the interval's own rate.
      for (const g of grids) {
        for (let j = Math.max(0, Math.floor((a - g.length) / g.hop) + 1); j * g.hop < b; j++) {
          const inside = Math.min(b, j * g.hop + g.length) - Math.max(a, j * g.hop);
          if (inside <= 0) continue;
          while (g.time.length <= j) { g.time.push(0); g.pulses.push(0); }
          g.time[j] += inside;
          g.pulses[j] += inside / (b - a);
        }
      }
    },
    missing(a, b, count) { for (let k = 1; k <= count; k++) record(s.missing, (a + (k * (b - a)) / (count + 1)) / fs); },
    extra(at) { record(s.extra, at / fs); },
    irregular(a) { record(s.irregular, a / fs); },
  });
  const edge = (at: number) => { s.edges++; train.edge(at); };
  let edges: PulseEdges | null = null;
  const start = (trigger: Trigger | null) => { s.trigger = trigger; if (trigger) edges = new PulseEdges(trigger, edge); };
  // Undeclared levels come from the first second: midway between its extremes, hysteresis a share of its span. The extremes
  // are those of its running median of three (Tukey's smoothing, common practice): a lone spike, which would set a level no
  // pulse reaches, does not count; a pulse two or more samples wide does.
  const learnLength = Math.max(1, Math.round(TRIGGER_LEARN_S * fs));
  let learn: Float64Array | null = null, learnFill = 0;
  if (tacho.triggerLevel != null && tacho.triggerHysteresis != null) start({ level: tacho.triggerLevel, hysteresis: tacho.triggerHysteresis });
  else learn = new Float64Array(learnLength);
  const learnt = () => {
    const seen = learn!.subarray(0, learnFill);
    learn = null;
    let lo = Infinity, hi = -Infinity;
    for (let i = 0; i < seen.length; i++) {
      const v = medianOfThree(seen[i > 0 ? i - 1 : i], seen[i], seen[i + 1 < seen.length ? i + 1 : i]);
      if (Number.isFinite(v)) { if (v < lo) lo = v; if (v > hi) hi = v; }
    }
    s.found = true;
    start(hi > lo ? { level: tacho.triggerLevel ?? (lo + hi) / 2, hysteresis: tacho.triggerHysteresis ?? TRIGGER_HYSTERESIS_SHARE * (hi - lo) } : null);
    edges?.push(seen);
  };
  let done = false;
  const finalize = () => {
    if (done) return;
    done = true;
    if (learn) learnt();
    train.end();
    s.revolutions = good / p;
    if (good > 0) s.meanRpm = (60 * fs * good) / (p * span);
    if (fastest > 0) { s.maxRpm = 60 * fs * fastest; s.minRpm = 60 * fs * slowest; }
  };
  return {
    channel,
    push(x) {
      let i = 0;
      if (learn) {
        i = Math.min(x.length, learnLength - learnFill);
        learn.set(x.subarray(0, i), learnFill);
        learnFill += i;
        if (learnFill === learnLength) learnt();
      }
      if (i < x.length) edges?.push(x.subarray(i));
    },
    finish: () => ({}),
    summary() { finalize(); return s; },
    windows(length, hop) {
      const g = { length, hop, pulses: [] as number[], time: [] as number[] };
      grids.push(g);
      return (j) => { finalize(); return g.time[j] > 0 ? (60 * fs * g.pulses[j]) / (p * g.time[j]) : null; };
    },
  };
}
