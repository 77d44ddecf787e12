// Flatline: a dead or disconnected sensor: a spread of a few converter steps at most, or long constant stretches.
import type { StageDefinition } from '../stage.js';
import { momentsOf } from '../fused/moments.js';
import { MIN_HOLD_REPEATS, repeatRunsOf } from '../fused/repeat-runs.js';
import { zeroRunsOf } from '../fused/zero-runs.js';
import { NO_FINITE_SAMPLES, noFiniteSamples, pct, secs, type QualityThresholds, type Severity } from './flag.js';

export const flatline: StageDefinition<QualityThresholds> = {
  group: 'quality',
  section: null,
  spectral: false,
  columns: () => [{ name: 'flatline_run_s', unit: 's', description: 'Longest stretch of exactly repeated values; null when the channel has no finite samples.' }],
  create(ctx, q) {
    // The spread comes from the channel's shared moments; this stage only looks for constant stretches.
    const shared = momentsOf(ctx);
    const runs = repeatRunsOf(ctx, q.flatline.stuck_stretch_s);
    // Exact zeros are a logger's gap, which the dropout flag names; a stuck stretch is judged when it holds another value.
    const zeros = zeroRunsOf(ctx);
    // A tacho channel holds one level between its pulses, for seconds on a slow shaft: only a channel that never moves is at fault.
    const restsBetweenPulses = ctx.tacho != null;
    let n = 0;
    return {
      push(x) { n += x.length; },
      finish() {
        const longest = runs.longest, longestEnd = runs.longestEnd;
        const fs = ctx.sampleRate, step = ctx.stepSize;
        const m = shared.moments();
        const threshold = `fail: spread ≤ ${q.flatline.fail_steps} converter steps${step == null ? ' (no spread at all when the step is unknown)' : ''}; warn (not on a tacho channel): constant for ≥ ${secs(q.flatline.warn_run_s)}, or for ≥ ${secs(q.flatline.warn_stuck_s)} where fewer than ${pct(q.flatline.stuck_repeat_fraction)} of the other samples repeat, or ${pct(q.flatline.warn_stuck_fraction)} of the recording in such stretches of ≥ ${secs(q.flatline.stuck_stretch_s)} (and ≥ ${MIN_HOLD_REPEATS + 1} samples) that end with jumps of more than two steps of the data`;
        if (noFiniteSamples(n, m.n)) {
          // Nothing was looked at, so no stretch was found: null, not the 0 of a channel searched in vain; the dropout flag fails it.
          ctx.flag({ name: 'flatline', severity: 'ok', value: null, threshold, evidence: {}, message: NO_FINITE_SAMPLES });
          return { flatline_run_s: null };
        }
        const spread = m.n ? m.max - m.min : 0;
        const runS = (longest + (longest ? 1 : 0)) / fs;
        // How often the rest of the signal repeats itself: rarely, for a signal that moves by more than a step between samples.
        const otherRepeats = n > 0 ? (runs.repeats - longest) / n : 1;
        // Short held stretches, again and again (a transfer repeating its last value): those that end with a jump of more than
        // two steps of the data, their share, and how often the rest repeats. A slow signal resting on its codes leaves each by one step.
        const held = runs.held, stuckShare = n > 0 ? held / n : 0;
        const restRepeats = n > held ? Math.max(0, runs.repeats - (held - runs.holds)) / (n - held) : 1;
        const dataStep = runs.dataStep, jump = runs.holds > 0 ? runs.jumps / runs.holds : null;
        // The longest stretch left by at most two steps of the data: a slow signal resting on its code near a crest, not a fault.
        const longestJump = runs.longestJump;
        const leftByAStep = longestJump != null && dataStep != null && longestJump <= 2 * dataStep;
        const deadLimit = step != null ? q.flatline.fail_steps * step : 0;
        const minStretchS = Math.max(q.flatline.stuck_stretch_s, (MIN_HOLD_REPEATS + 1) / fs);
        let severity: Severity = 'ok', message = `spread ${spread.toPrecision(4)} ${ctx.unit}; longest constant stretch ${secs(runS)}`;
        if (n > 0 && spread <= deadLimit) {
          severity = 'fail';
          message = `the channel hardly moves (spread ${spread.toPrecision(3)} ${ctx.unit}${step != null ? `, ${Math.round(spread / step)} converter steps` : ''}): a dead or disconnected sensor; check the sensor, cable and supply before trusting any figure`;
        } else if (!restsBetweenPulses && !leftByAStep && runS >= q.flatline.warn_stuck_s && otherRepeats < q.flatline.stuck_repeat_fraction && runS < q.flatline.warn_run_s && zeros.longest <= longest) {
          severity = 'warn';
          message = `a signal that otherwise changes from sample to sample (${pct(otherRepeats)} repeats) stays exactly constant for ${secs(runS)} (ending at ${secs((longestEnd + 1) / fs)}): a stuck converter or an intermittent connection; RMS, spectra and window figures over that stretch describe the fault, not the signal`;
        } else if (!restsBetweenPulses && !leftByAStep && runS >= q.flatline.warn_run_s) {
          severity = 'warn';
          message = `the value stays exactly constant for ${secs(runS)} (ending at ${secs((longestEnd + 1) / fs)}): an intermittent connection or a stuck converter; RMS, spectra and window figures over that stretch describe the fault, not the signal`;
        } else if (!restsBetweenPulses && stuckShare >= q.flatline.warn_stuck_fraction && restRepeats < q.flatline.stuck_repeat_fraction) {
          severity = 'warn';
          message = `${pct(stuckShare)} of the recording lies in constant stretches of ${secs(minStretchS)} or more (the longest ${secs(runS)}) that end with jumps of ${stepsOf(jump, dataStep)} on average, in a signal that otherwise changes from sample to sample (${pct(restRepeats)} repeats): a converter or a transfer holding its last value again and again; held stretches carry nothing but their level, so band and window figures read up to ${pct(1 - Math.sqrt(1 - stuckShare))} low`;
        }
        ctx.flag({
          name: 'flatline', severity, value: runS, threshold,
          evidence: {
            spread, repeat_fraction: otherRepeats, stuck_fraction: stuckShare, repeat_fraction_between_holds: restRepeats,
            hold_end_jump: jump, data_step: dataStep, hold_end_jump_steps: jump != null && dataStep ? jump / dataStep : null,
            longest_run_samples: longest ? longest + 1 : 0, longest_run_end_s: longest ? (longestEnd + 1) / fs : null, longest_run_end_jump: longestJump != null && Number.isFinite(longestJump) ? longestJump : null,
          },
          message,
        });
        return { flatline_run_s: runS };
      },
    };
  },
};

/** A jump in steps of the data, or in the unit's own terms when no step is known. */
const stepsOf = (jump: number | null, step: number | null) => (jump == null ? 'unknown size' : step ? `${Number((jump / step).toPrecision(3))} steps of the data` : `${jump.toPrecision(3)}`);
