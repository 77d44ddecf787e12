// Noise floor: the channel's level against the measurement chain's own noise, where archive.yaml declares it. A dead or
// disconnected sensor on a fine converter (24-bit) still reads the chain's noise, many steps wide, which the flatline
// flag's spread of a few steps never catches; against the declared floor it reads as what it is. Without a declared floor,
// where the converter's step is known, each window is held against the converter's own floor (a few steps RMS). Windows at
// either floor amid live data are a note naming their stretches: a rest, a hold or a quiet gap between events reads so as
// much as a sensor that came loose, so such a stretch alone is no evidence of a fault; the longest is named beside the first.
import type { StageDefinition } from '../stage.js';
import { momentsOf } from '../fused/moments.js';
import { TREND_WINDOW_S } from './evidence.js';
import { NO_FINITE_SAMPLES, pct, secs, type QualityThresholds, type Severity } from './flag.js';
import { joinedLength, joinedWindowsOf } from './joined-windows.js';
import { deadShareShortfall, liveRms, noQuiet, tallyWindow, type QuietTally } from './quiet-windows.js';
import { saturationLimits } from './saturation.js';

/** Level above the floor in dB, 20·log10(rms / floor): power ratio of the channel's AC part to the chain's noise. */
export const aboveFloorDb = (rms: number, floor: number) => 20 * Math.log10(rms / floor);

/**
 * How much the chain's noise raises the RMS of a channel `db` above it: uncorrelated powers add, so the signal's own RMS
 * is rms·√(1 − 10^(−db/10)), and the RMS reads 1/√(1 − 10^(−db/10)) − 1 high (derived; Infinity at or below the floor).
 */
export const rmsExcess = (db: number) => (db > 0 ? 1 / Math.sqrt(1 - 10 ** (-db / 10)) - 1 : Infinity);

/**
 * What the figures rest on where a share of the windows carries nothing but the floor: the whole recording, so RMS and band
 * levels read 1 − √(1 − share) below the live part's alone (derived), the test's own level at a rest, that much low at a fault.
 */
const restSaid = (t: QuietTally) => {
  const share = t.quiet / t.all;
  return `the figures take in the whole recording: RMS and band levels read ${pct(deadShareShortfall(share))} below those of its live ${pct(1 - share)} alone, the test's own level where the stretches are rests or holds, that much low where one is a fault; the windows' figures there describe the floor`;
};

/** The stretches of quiet windows, for a message: how many, the first and the longest with their starts and ends. */
export function stretchesSaid(t: QuietTally, fs: number): string {
  const span = (from: number, to: number) => `from ${secs(from / fs)} to ${secs(to / fs)}`;
  const first = span(t.firstQuietStart, t.firstStretchEnd);
  if (t.stretches === 1) return `in one stretch ${first}`;
  if (t.longestStart === t.firstQuietStart) return `in ${t.stretches} stretches, the first and longest ${first}`;
  return `in ${t.stretches} stretches, the first ${first}, the longest ${span(t.longestStart, t.longestEnd)}`;
}

/** Where the stretches lie, in seconds, for the evidence. */
const stretchEvidence = (t: QuietTally, fs: number) => ({
  quiet_stretches: t.stretches,
  first_quiet_s: t.quiet ? t.firstQuietStart / fs : null,
  first_quiet_end_s: t.quiet ? t.firstStretchEnd / fs : null,
  longest_quiet_s: t.quiet ? t.longestStart / fs : null,
  longest_quiet_end_s: t.quiet ? t.longestEnd / fs : null,
});

/** What a stretch at a floor amid live data is: by itself no fault, and what would tell one. */
const causesSaid = 'a machine at rest, a load held or a quiet gap between events reads so, and so does a sensor that came loose or lost power: by itself no fault; where the test kept the machine running through a stretch, check the sensor, cable and supply';

/** Windows below the floor that hold one value or sit at a rail: named as what they are, by the flags that judge them. */
const heldSaid = (held: number) => `${held} ${held === 1 ? 'window' : 'windows'} below it held at one value or at a rail, which the flatline, saturation or dropout flag names`;

/**
 * Within this many dB of the floor the excess is no figure: 0.1 dB, two sampling spreads of the RMS of a 1 s window of 12,800
 * noise samples (8.686/√(2N) dB, from memory), moves 1/√(1 − 10^(−dB/10)) by 5 % at 0.9 dB, more below, without bound at 0 dB.
 */
export const EXCESS_UNTOLD_WITHIN_DB = 1;

/** The excess as a figure for a message and evidence, or null where the level lies within `within` dB of the floor. */
export const toldExcess = (db: number, within = EXCESS_UNTOLD_WITHIN_DB) => (db >= within && Number.isFinite(rmsExcess(db)) ? rmsExcess(db) : null);

export const noiseFloor: StageDefinition<QualityThresholds> = {
  group: 'quality',
  section: null,
  spectral: false,
  columns: () => [{ name: 'above_noise_floor_db', unit: 'dB', description: '20·log10(std / declared noise_floor): the channel above its measurement chain\'s own noise; null when no floor is declared.' }],
  create(ctx, q) {
    const shared = momentsOf(ctx);
    const floor = ctx.noiseFloor ?? null;
    const step = ctx.stepSize;
    const o = q.noise_floor;
    // A connection that comes and goes leaves stretches at the floor in a recording that is above it as a whole: each
    // window's level is held against the declared floor, or, without one, against the converter's own floor of a few steps.
    const fs = ctx.sampleRate;
    const floorRms = floor != null ? floor * 10 ** (o.fail_db / 20) : step != null ? o.converter_floor_steps * step : null;
    // The windows are joined from the 0.1 s ones the report's RMS trend keeps: no more work a sample.
    const windows = noQuiet(), asked = Math.max(1, Math.round(fs * o.window_s)), part = Math.max(1, Math.round(TREND_WINDOW_S * fs));
    const windowLength = joinedLength(asked, part);
    if (floorRms != null && !ctx.tacho) {
      // Windows held at a rail or at one value are the saturation and flatline flags' (and zeros the dropout flag's).
      const limits = saturationLimits(ctx.range, ctx.fullScale);
      joinedWindowsOf(ctx, asked, part, (sum, sumSquares, peak, end, finite) =>
        tallyWindow(windows, sum, sumSquares, peak, end, finite, windowLength, floorRms, step, limits));
    }
    return {
      push() {},
      finish() {
        const { warn_db: warnDb, fail_db: failDb, converter_floor_steps: floorSteps, live_above_db: liveDb } = o;
        const windowS = windowLength / fs;
        const m = shared.moments();
        if (floor == null) return atConverterFloor(m.n, windowS, floorSteps, liveDb);
        const threshold = `above the declared noise floor: fail below ${failDb} dB, warn below ${warnDb} dB (RMS ${pct(rmsExcess(warnDb))} high); a note for ${secs(windowS)} windows below ${failDb} dB in a channel above it as a whole`;
        // A pulse train's level says nothing about a floor; a channel without samples is the dropout flag's.
        if (ctx.tacho || m.n === 0) {
          const why = ctx.tacho ? 'not judged on a tacho channel' : NO_FINITE_SAMPLES;
          ctx.flag({ name: 'noise_floor', severity: 'ok', value: null, threshold, evidence: { noise_floor: floor }, message: why });
          return { above_noise_floor_db: null };
        }
        const rms = Math.sqrt(m.m2 / m.n);
        const db = rms > 0 ? aboveFloorDb(rms, floor) : -Infinity;
        const level = `RMS ${rms.toPrecision(3)} ${ctx.unit} (mean removed), ${!Number.isFinite(db) ? 'nothing above' : db < 0 ? `${(-db).toFixed(1)} dB below` : `${db.toFixed(1)} dB above`} the declared noise floor ${floor.toPrecision(3)} ${ctx.unit}`;
        let severity: Severity = 'ok', message = level;
        if (db <= 0) {
          severity = 'fail';
          message = `${level}: at or below the chain's own noise, a dead or disconnected sensor (the converter alone is quieter than the chain), or a noise_floor declared too high; check the sensor, cable and supply and the declaration before trusting any figure`;
        } else if (db < failDb) {
          severity = 'fail';
          const excess = toldExcess(db);
          message = `${level}: ${excess == null ? `within ${EXCESS_UNTOLD_WITHIN_DB} dB of the chain's own noise, so every figure describes that noise, not the signal` : `the chain's noise holds at least half the power, so every figure describes the noise more than the machine (RMS ${pct(excess)} high)`}: a dead or disconnected sensor, or a machine at rest; check the sensor, cable and supply before trusting any figure`;
        } else if (db < warnDb) {
          severity = 'warn';
          message = `${level}: the chain's noise raises RMS and band levels by up to ${pct(rmsExcess(db))} and hides quiet content; use a more sensitive sensor or a finer range, or read the levels as upper bounds`;
        } else if (windows.quiet > 0 && windows.quiet < windows.all) {
          severity = 'note';
          message = `${level} as a whole; ${windows.quiet} of its ${windows.all} windows of ${secs(windowS)} within ${failDb} dB of the floor, ${stretchesSaid(windows, ctx.sampleRate)}: ${causesSaid}; ${restSaid(windows)}`;
        } else if (windows.held > 0) {
          message = `${level}; ${heldSaid(windows.held)}`;
        }
        ctx.flag({ name: 'noise_floor', severity, value: Number.isFinite(db) ? db : null, threshold, evidence: { noise_floor: floor, rms, above_floor_db: Number.isFinite(db) ? db : null, rms_excess: toldExcess(db), windows: windows.all, quiet_windows: windows.quiet, held_windows: windows.held, ...stretchEvidence(windows, ctx.sampleRate) }, message });
        return { above_noise_floor_db: Number.isFinite(db) ? db : null };
      },
    };

    /**
     * Without a declared floor: windows at the converter's own floor (at most `floorSteps` steps RMS) in a channel whose
     * other windows stand `liveDb` or more above it: a note naming the stretches, a rest or hold as much as a loose sensor.
     */
    function atConverterFloor(n: number, windowS: number, floorSteps: number, liveDb: number) {
      const threshold = `no noise_floor declared: a note where a ${secs(windowS)} window reads at most ${floorSteps} converter steps RMS (mean removed; the converter's own floor) while the other windows stand ${liveDb} dB or more above that`;
      if (step == null || ctx.tacho || n === 0) {
        const why = ctx.tacho ? 'not judged on a tacho channel' : n === 0 ? 'no samples to judge' : 'not judged: no noise_floor declared, and no converter step to judge windows by (floating-point samples keep none)';
        ctx.flag({ name: 'noise_floor', severity: 'ok', value: null, threshold, evidence: { noise_floor: null }, message: why });
        return { above_noise_floor_db: null };
      }
      const at = `the converter's floor (at most ${floorSteps} steps RMS, ${floorRms!.toPrecision(3)} ${ctx.unit})`;
      const live = liveRms(windows), liveAbove = live > 0 ? aboveFloorDb(live, floorRms!) : null;
      const held = windows.held ? `; ${heldSaid(windows.held)}` : '';
      let severity: Severity = 'ok', message = `no noise_floor declared; none of its ${windows.all} windows of ${secs(windowS)} at ${at}${held}`;
      if (windows.quiet > 0 && liveAbove != null && liveAbove >= liveDb) {
        severity = 'note';
        message = `no noise_floor declared; ${windows.quiet} of its ${windows.all} windows of ${secs(windowS)} sit at ${at}, ${stretchesSaid(windows, fs)}, while the others stand ${liveAbove.toFixed(1)} dB above it: ${causesSaid}; ${restSaid(windows)}${held}`;
      } else if (windows.quiet > 0) {
        message = `no noise_floor declared; ${windows.quiet} of its ${windows.all} windows of ${secs(windowS)} at ${at}, ${liveAbove == null ? 'and none above it' : `the others only ${liveAbove.toFixed(1)} dB above it`} (under ${liveDb} dB): a channel quiet throughout, whose steps the resolution and flatline flags judge${held}`;
      }
      ctx.flag({
        name: 'noise_floor', severity, value: null, threshold, message,
        evidence: { noise_floor: null, converter_floor: floorRms, live_rms: live, live_above_floor_db: liveAbove, windows: windows.all, quiet_windows: windows.quiet, held_windows: windows.held, ...stretchEvidence(windows, fs) },
      });
      return { above_noise_floor_db: null };
    }
  },
};
