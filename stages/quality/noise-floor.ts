// Noise floor: the channel's level against the measurement chain's own noise, where archive.yaml declares it. A dead or
// disconnected sensor on a fine converter (24-bit) still reads the chain's noise, many steps wide, which the flatline
// flag's spread of a few steps never catches; against the declared floor it reads as what it is.
import { fixedWindowsOf } from '../fused/fixed-windows.js';
import { momentsOf } from '../fused/moments.js';
import type { StageDefinition } from '../stage.js';
import { pct, secs, type QualityThresholds, type Severity } from './flag.js';

/** Level above the floor in dB, 20·log10(rms / floor): power ratio of the channel's AC part to the chain's noise. */
export const aboveFloorDb = (rms: number, floor: number) => 20 * Math.log10(rms / floor);

/**
 * How much the chain's noise raises the RMS of a channel `db` above it: uncorrelated powers add, so the signal's own RMS
 * is rms·√(1 − 10^(−db/10)), and the RMS reads 1/√(1 − 10^(−db/10)) − 1 high (derived; Infinity at or below the floor).
 */
export const rmsExcess = (db: number) => (db > 0 ? 1 / Math.sqrt(1 - 10 ** (-db / 10)) - 1 : Infinity);

/**
 * Within this many dB of the floor the excess is no figure: 0.1 dB, two sampling spreads of the RMS of a 1 s window of 12,800
 * noise samples (8.686/√(2N) dB, from memory), moves 1/√(1 − 10^(−dB/10)) by 5 % at 0.9 dB, more below, without bound at 0 dB.
 */
export const EXCESS_UNTOLD_WITHIN_DB = 1;

/** The excess as a figure for a message and evidence, or null where the level lies within `within` dB of the floor. */
export const toldExcess = (db: number, within = EXCESS_UNTOLD_WITHIN_DB) => (db >= within && Number.isFinite(rmsExcess(db)) ? rmsExcess(db) : null);

export const noiseFloor: StageDefinition<QualityThresholds> = {
  group: 'quality',
  columns: () => [{ name: 'above_noise_floor_db', unit: 'dB', description: '20·log10(std / declared noise_floor): the channel above its measurement chain\'s own noise; null when no floor is declared.' }],
  create(ctx, q) {
    const shared = momentsOf(ctx);
    const floor = ctx.noiseFloor ?? null;
    // A connection that comes and goes leaves stretches at the floor in a recording that is above it as a whole: each
    // window's level is held against the floor too (back-to-back windows, shared with windows.parquet's when they agree).
    const windowLength = Math.max(1, Math.round(ctx.sampleRate * q.noise_floor.window_s));
    const quietBelow = floor != null ? floor * floor * 10 ** (q.noise_floor.fail_db / 10) : 0;
    const windows = { all: 0, quiet: 0, firstQuietStart: -1 };
    if (floor != null && !ctx.tacho) {
      fixedWindowsOf(ctx, windowLength).listen((sum, sumSquares, _peak, end, finite) => {
        if (finite === 0) return; // a window of missing samples only: the dropout flag's
        const mean = sum / finite, meanSquare = sumSquares / finite - mean * mean;
        windows.all++;
        if (meanSquare >= quietBelow) return;
        if (windows.quiet === 0) windows.firstQuietStart = end - windowLength;
        windows.quiet++;
      });
    }
    return {
      push() {},
      finish() {
        const { warn_db: warnDb, fail_db: failDb, window_s: windowS } = q.noise_floor;
        const threshold = `above the declared noise floor: fail below ${failDb} dB, warn below ${warnDb} dB (RMS ${pct(rmsExcess(warnDb))} high) or with a ${secs(windowS)} window below ${failDb} dB`;
        const m = shared.moments();
        // A pulse train's level says nothing about a floor; a channel without samples is the dropout flag's.
        if (floor == null || ctx.tacho || m.n === 0) {
          const why = floor == null ? 'not judged: no noise_floor declared' : ctx.tacho ? 'not judged on a tacho channel' : 'no samples to judge';
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
          severity = 'warn';
          message = `${level} as a whole, but ${windows.quiet} of its ${windows.all} windows of ${secs(windowS)} fell to within ${failDb} dB of the floor, the first from ${secs(windows.firstQuietStart / ctx.sampleRate)}: a connection that comes and goes, or the machine at rest for a while; the windows' figures there describe the chain's noise, and RMS and band levels read low`;
        }
        ctx.flag({ name: 'noise_floor', severity, value: Number.isFinite(db) ? db : null, threshold, evidence: { noise_floor: floor, rms, above_floor_db: Number.isFinite(db) ? db : null, rms_excess: toldExcess(db), windows: windows.all, quiet_windows: windows.quiet, first_quiet_s: windows.quiet ? windows.firstQuietStart / ctx.sampleRate : null }, message });
        return { above_noise_floor_db: Number.isFinite(db) ? db : null };
      },
    };
  },
};
