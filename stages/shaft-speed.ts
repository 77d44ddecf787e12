// A tacho channel's shaft speed: the channel's shared product, published to the recording so its other channels can read it.
import { PulseEdges, type Trigger } from './dsp/pulse-edges.js';
import { PulseTrain, rateSlope, type Intervals } from './dsp/pulse-train.js';
import { timeFromRest, timeToRest } from './dsp/time-to-rest.js';
import { levelsOf, restLook, sampleExtremes, spanComparable, triggerFits, triggerFrom, type LevelsKind, type PulseShape, type RestLook, type SampleExtremes } from './dsp/trigger-level.js';
import { QUALITY_DEFAULTS } from './quality/flag.js';
import type { ChannelContext, Stage } from './stage.js';

export { TRIGGER_HYSTERESIS_SHARE } from './dsp/trigger-level.js';

/** Key of the recording's list of tacho products (one per tacho channel, in channel order of creation). */
export const SHAFT_SPEED_KEY = 'shaft-speed';

/** Seconds of signal in each stretch an undeclared trigger is found from, and then held against. */
export const TRIGGER_LEARN_S = 1;
/**
 * When the train does not hold together: `fail_fault_ratio`, the pulse_train flag's threshold (spec section quality), is the
 * missing and irregular pulses per good interval above which the flag fails and the speed and every count from the train are
 * withheld, one rule for the table and the report.
 */
export interface SpeedOptions { fail_fault_ratio: number }

export const SPEED_DEFAULTS: SpeedOptions = { fail_fault_ratio: QUALITY_DEFAULTS.pulse_train.fail_fault_ratio };

/** The speed options of a spec's quality thresholds: the pulse_train flag's fault ratio. */
export const speedOptionsOf = (pulseTrain: { fail_fault_ratio: number }): SpeedOptions => ({ fail_fault_ratio: pulseTrain.fail_fault_ratio });

// Extra pulses, dropped between two good ones a whole interval apart, leave each good interval whole and do not count; missing and
// irregular ones leave intervals unexplained. Without a good interval there is no speed to withhold.
export const trainBroken = (lost: number, good: number, failFaultRatio: number) => good > 0 && lost > failFaultRatio * good;
/** Times kept per kind of pulse fault, for the notes (the counts are complete). */
const TIMES_KEPT = 10;

export interface PulseFaults { count: number; times_s: number[] }

export interface SpeedSummary {
  /** Trigger used (the first, when it followed the signal), and whether it was found from the signal (else declared); null when none was found. */
  trigger: Trigger | null;
  found: boolean;
  /** Where the found trigger came from: the start of its stretch, s (0: the first second). */
  foundAtS: number;
  /** Whether its levels were set with the extremes of earlier stretches too (pulses one sample wide, at most one a stretch). */
  foundAcross: boolean;
  /** The pulses' shape the found trigger was set for, and, where they leave a rest level, how that stretch rested and how far they reached. */
  foundShape: PulseShape | null;
  foundLook: RestLook | null;
  /**
   * Why none was found: every stretch flat, or the first stretch flat (else noisy) and none later clear of its noise; `still`:
   * every sample but the highest and the lowest within two converter steps of each other (a lone pulse one sample wide, else noise);
   * `clearest`: the stretch whose farthest excursion from its rest level was the most noise deviations out, and where it starts, s.
   */
  none: { firstFlat: boolean; allFlat: boolean; seconds: number; still: boolean; clearest: (RestLook & { atS: number }) | null } | null;
  /** Moves of a found trigger that followed the signal's level: how many, the first one's time, and the range of levels used. */
  followed: { count: number; firstS: number; lowest: number; highest: number };
  /** Time the good intervals cover, s (kept when the speed is withheld, for the pulse_train flag). */
  coveredS: number;
  /** Whether the speed and the counts from the train are withheld: missing and irregular pulses beyond fail_fault_ratio of the good intervals (trainBroken). */
  withheld: boolean;
  /** Revolutions over all good intervals / their duration, and the extremes of the per-revolution speed; null without them or withheld. */
  meanRpm: number | null;
  minRpm: number | null;
  maxRpm: number | null;
  /** Revolutions the speed figures rest on: good intervals / pulses per revolution (kept when withheld, for the pulse_train flag). */
  revolutions: number;
  edges: number;
  missing: PulseFaults;
  extra: PulseFaults;
  irregular: PulseFaults;
  /**
   * Whether two or more pulses went missing, every one at the same place in the revolution (the same mark of pulses_per_rev,
   * counted from the first pulse; any mark when there is one a revolution) with no irregular interval to break the count.
   */
  missingAtOnePlace: boolean;
  /**
   * Where the train starts from rest: its first pulse at `pulseS`, the shaft at rest until `restS` (the rate's line through its
   * first two revolutions back to zero; at most the first pulse, below 0 where it started before the recording); null otherwise.
   */
  fromRest: { pulseS: number; restS: number } | null;
  /** Where the train ends by slowing to rest: its last pulse at `pulseS`, the shaft at rest from `restS` (the same line forward); null otherwise. */
  toRest: { pulseS: number; restS: number } | null;
}

export interface ShaftSpeed extends Stage {
  readonly channel: string;
  readonly options: SpeedOptions;
  /** Complete once every chunk has been pushed (read it in finish()). */
  summary(): SpeedSummary;
  /** Speed per window of `length` samples every `hop` samples; register at create(), read in finish(). Null where no good interval covers it. */
  windows(length: number, hop: number): (index: number) => number | null;
}

/** The tacho products of the channel's recording (none when no channel declares pulses_per_rev, or outside a recording). */
export const shaftSpeedsOf = (ctx: ChannelContext): ShaftSpeed[] => ctx.recordingShared?.(SHAFT_SPEED_KEY, () => [] as ShaftSpeed[]) ?? [];

/** The speed of this tacho channel, made once per channel and published to the recording; every stage reading it passes the same options. */
export function speedOf(ctx: ChannelContext, options: SpeedOptions = SPEED_DEFAULTS): ShaftSpeed {
  if (!ctx.tacho) throw new Error(`${ctx.name} is not a tacho channel (no pulses_per_rev)`);
  const speed = ctx.shared(SHAFT_SPEED_KEY, () => {
    const product = makeShaftSpeed(ctx.name, ctx.sampleRate, ctx.tacho!, ctx.stepSize, options);
    shaftSpeedsOf(ctx).push(product);
    return product;
  });
  // One product answers every stage: options that differ would let the table and the report disagree.
  if (speed.options.fail_fault_ratio !== options.fail_fault_ratio) throw new Error(`${ctx.name}: the shaft speed was asked for with fail_fault_ratio ${options.fail_fault_ratio} and ${speed.options.fail_fault_ratio}`);
  return speed;
}

const fault = (): PulseFaults => ({ count: 0, times_s: [] });

// Order statistics of what was read: leaving its one highest and one lowest sample aside, it spans at most two converter steps
// (below that a converter flickers, IEEE Std 1241), or nothing where the step is unknown. A lone pulse one sample wide is still so.
const stillButExtremes = (e: SampleExtremes | null, step: number | null) => e == null || !(e.hi2 - e.lo2 > 2 * (step ?? 0));
const record = (f: PulseFaults, t: number) => { f.count++; if (f.times_s.length < TIMES_KEPT) f.times_s.push(t); };

// A rate 1/d + slope·(x − m) about the interval's midpoint m integrates to one pulse over [a, b] whatever the slope; the share of
// [lo, hi] is its integral there (a linear rate, closed form). A slope that would take the rate to zero within the interval is
// not that of a turning shaft, and the share falls back to the interval's own rate.
/** Pulses turned over [lo, hi] within the good interval [a, b] whose rate changes by `slope`. */
export function pulseShare(a: number, b: number, lo: number, hi: number, slope = 0): number {
  const d = b - a, m = (a + b) / 2;
  if (!(Math.abs(slope) * d / 2 < 1 / d)) slope = 0;
  return (hi - lo) / d + (slope / 2) * ((hi - m) ** 2 - (lo - m) ** 2);
}

function makeShaftSpeed(channel: string, fs: number, tacho: NonNullable<ChannelContext['tacho']>, step: number | null = null, options: SpeedOptions = SPEED_DEFAULTS): ShaftSpeed {
  const p = tacho.pulsesPerRev;
  const s: SpeedSummary = {
    trigger: null, found: false, foundAtS: 0, foundAcross: false, foundShape: null, foundLook: null, none: null, followed: { count: 0, firstS: Number.NaN, lowest: Infinity, highest: -Infinity },
    coveredS: 0, withheld: false, meanRpm: null, minRpm: null, maxRpm: null, revolutions: 0, edges: 0, missing: fault(), extra: fault(), irregular: fault(),
    missingAtOnePlace: false, fromRest: null, toRest: null,
  };
  // Each pulse's place among the revolution's marks: good pulses and missing ones count, extra ones do not.
  let pulse = 0;
  const missingPlaces = new Set<number>();
  let good = 0, span = 0, fastest = 0, slowest = Infinity, lastEnd = Number.NaN;
  const behind: Intervals = [];
  // The train's first two revolutions of good intervals, while unbroken from its first event, and its events' first and last times.
  const front: Intervals = [];
  let frontOpen = true, firstEvent = Infinity, lastEvent = -Infinity;
  const event = (a: number, b: number) => { firstEvent = Math.min(firstEvent, a); lastEvent = Math.max(lastEvent, b); };
  const revolution: number[] = [];
  const grids: { length: number; hop: number; pulses: number[]; time: number[] }[] = [];
  const train = new PulseTrain(p, {
    interval(a, b) {
      if (frontOpen && front.length < 2 * p && (front.length ? a === front.at(-1)![1] : a <= firstEvent)) front.push([a, b]);
      else if (front.length < 2 * p) frontOpen = false;
      event(a, b);
      good++;
      pulse++;
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
      // The rate's slope over the two revolutions of good intervals just before, where this one follows them (whole revolutions,
      // so marks spaced unevenly around the shaft do not read as a change of speed): a run-up turns a window's share of an
      // interval faster at its end than at its start.
      if (a !== lastEnd) behind.length = 0;
      const slope = behind.length === 2 * p ? rateSlope(behind.slice(0, p), behind.slice(p)) ?? 0 : 0;
      behind.push([a, b]);
      if (behind.length > 2 * p) behind.shift();
      lastEnd = b;
      // Each window takes the share of the interval inside it, at the interval's rate and its slope.
      for (const g of grids) {
        for (let j = Math.max(0, Math.floor((a - g.length) / g.hop) + 1); j * g.hop < b; j++) {
          const lo = Math.max(a, j * g.hop), hi = Math.min(b, j * g.hop + g.length);
          if (hi <= lo) continue;
          while (g.time.length <= j) { g.time.push(0); g.pulses.push(0); }
          g.time[j] += hi - lo;
          g.pulses[j] += pulseShare(a, b, lo, hi, slope);
        }
      }
    },
    missing(a, b, count) {
      event(a, b);
      for (let k = 1; k <= count; k++) { record(s.missing, (a + (k * (b - a)) / (count + 1)) / fs); missingPlaces.add((pulse + k) % p); }
      pulse += count + 1;
    },
    extra(at) { event(at, at); record(s.extra, at / fs); },
    irregular(a, b) { event(a, b); record(s.irregular, a / fs); },
  });
  const edge = (at: number) => { s.edges++; train.edge(at); };
  let edges: PulseEdges | null = null;
  // An undeclared trigger is found stretch by stretch (a second each): the first stretch whose levels stand clear of its noise
  // sets it (trigger-level.ts). A stretch that holds no clear pulse holds no edge worth timing, so it is let go and the search goes
  // on, to the end if need be; the one just before is timed too, for a pulse rising across the boundary. The extremes of the stretches
  // let go are carried on, so pulses one sample wide, at most one a stretch, are found at the second one; the stretch that last set a
  // new extreme is kept, and timed too when those extremes set the levels (no stretch between it and the one before holds a pulse
  // as high, or it would have set them sooner). Memory stays three stretches.
  // Once found, each stretch is held against the trigger and moves it when its levels have drifted towards the hysteresis band.
  const declared = tacho.triggerLevel != null && tacho.triggerHysteresis != null;
  const follows = tacho.triggerLevel == null && tacho.triggerHysteresis == null;
  const stretch = Math.max(1, Math.round(TRIGGER_LEARN_S * fs));
  let block: Float64Array | null = declared ? null : new Float64Array(stretch), before: Float64Array | null = declared ? null : new Float64Array(stretch);
  let held: Float64Array | null = null, heldFill = 0, heldStart = 0, earlier: SampleExtremes | null = null;
  let fill = 0, beforeFill = 0, blockStart = 0, kind: LevelsKind = 'smoothed', shape: PulseShape = 'two-level', firstFlat: boolean | null = null, allFlat = true;
  let clearest: (RestLook & { atS: number }) | null = null;
  const outBy = (l: RestLook) => Math.max(l.up, l.down) / l.noise;
  if (declared) { s.trigger = { level: tacho.triggerLevel!, hysteresis: tacho.triggerHysteresis! }; edges = new PulseEdges(s.trigger, edge); }
  let current: Trigger | null = null;
  const used = (t: Trigger) => { s.followed.lowest = Math.min(s.followed.lowest, t.level); s.followed.highest = Math.max(s.followed.highest, t.level); };
  const stretchDone = () => {
    const x = block!.subarray(0, fill);
    if (!edges) {
      const found = triggerFrom(x, step, earlier);
      if (typeof found === 'string') {
        firstFlat ??= found === 'flat';
        allFlat &&= found === 'flat';
        const look = found === 'noise' ? restLook(x, 'smoothed', step) : null;
        if (look && (!clearest || outBy(look) > outBy(clearest))) clearest = { ...look, atS: blockStart / fs };
        const extremes = sampleExtremes(x, earlier ?? undefined);
        if (!earlier || extremes.hi1 > earlier.hi1 || extremes.lo1 < earlier.lo1) {
          held ??= new Float64Array(stretch);
          held.set(x);
          heldFill = fill;
          heldStart = blockStart;
        }
        earlier = extremes;
        [before, block] = [block, before];
        beforeFill = fill;
      } else {
        s.found = true;
        s.foundAtS = blockStart / fs;
        s.foundAcross = found.across === true;
        kind = found.kind;
        shape = found.shape;
        s.foundShape = found.shape;
        s.foundLook = found.look ?? null;
        // A found level keeps the direction it was found for (a bipolar pulse's crossing between its lobes); a declared one times rising edges.
        const level = tacho.triggerLevel ?? found.trigger.level, hysteresis = tacho.triggerHysteresis ?? found.trigger.hysteresis;
        s.trigger = tacho.triggerLevel == null && found.trigger.falling ? { level, hysteresis, falling: true } : { level, hysteresis };
        current = s.trigger;
        used(current);
        const beforeStart = blockStart - beforeFill;
        if (found.across && held && heldStart < beforeStart) {
          edges = new PulseEdges(current, edge, heldStart);
          edges.push(held.subarray(0, heldFill));
          edges.skipTo(beforeStart);
        } else edges = new PulseEdges(current, edge, beforeStart);
        edges.push(before!.subarray(0, beforeFill));
        before = held = null;
        edges.push(x);
      }
    } else {
      if (follows && !triggerFits(current!, levelsOf(x, kind))) {
        const found = triggerFrom(x, step);
        if (typeof found !== 'string' && found.kind === kind && found.shape === shape && (found.trigger.falling ?? false) === (current!.falling ?? false) && spanComparable(current!, found)) {
          if (s.followed.count++ === 0) s.followed.firstS = blockStart / fs;
          current = found.trigger;
          used(current);
          edges.retrigger(current);
        }
      }
      edges.push(x);
    }
    blockStart += fill;
    fill = 0;
  };
  let done = false, read = 0;
  const finalize = () => {
    if (done) return;
    done = true;
    if (block && fill > 0) stretchDone();
    block = before = held = null;
    if (!s.trigger) s.none = { firstFlat: firstFlat ?? true, allFlat, seconds: blockStart / fs, still: stillButExtremes(earlier, step), clearest };
    train.end(read);
    s.revolutions = good / p;
    s.coveredS = span / fs;
    s.withheld = trainBroken(s.missing.count + s.irregular.count, good, options.fail_fault_ratio);
    s.missingAtOnePlace = s.missing.count >= 2 && s.irregular.count === 0 && missingPlaces.size === 1;
    // Rest only at the train's ends, where its first or last event is a good pulse two unbroken revolutions hold.
    if (frontOpen && front.length === 2 * p && front[0][0] === firstEvent) {
      const t = timeFromRest(front, p, front[0][0]);
      if (t != null) s.fromRest = { pulseS: front[0][0] / fs, restS: (front[0][0] - t) / fs };
    }
    if (behind.length === 2 * p && behind.at(-1)![1] === lastEvent) {
      const t = timeToRest(behind.slice(0, p), behind.slice(p), lastEvent);
      if (t != null) s.toRest = { pulseS: lastEvent / fs, restS: (lastEvent + t) / fs };
    }
    if (s.withheld) return;
    if (good > 0) s.meanRpm = (60 * fs * good) / (p * span);
    if (fastest > 0) { s.maxRpm = 60 * fs * fastest; s.minRpm = 60 * fs * slowest; }
  };
  return {
    channel,
    options,
    push(x) {
      read += x.length;
      if (!block) return edges?.push(x);
      for (let i = 0; i < x.length;) {
        const take = Math.min(x.length - i, stretch - fill);
        block.set(x.subarray(i, i + take), fill);
        fill += take;
        i += take;
        if (fill === stretch) stretchDone();
      }
    },
    finish: () => ({}),
    summary() { finalize(); return s; },
    windows(length, hop) {
      const g = { length, hop, pulses: [] as number[], time: [] as number[] };
      grids.push(g);
      return (j) => { finalize(); return !s.withheld && g.time[j] > 0 ? (60 * fs * g.pulses[j]) / (p * g.time[j]) : null; };
    },
  };
}
