// Pulse train: whether a tacho channel's pulses hold together well enough for its speed figures to describe the recording.
import { momentsOf } from '../fused/moments.js';
import { REST_CLEAR_SIGMAS, type RestLook } from '../dsp/trigger-level.js';
import { speedOf, speedOptionsOf, type SpeedSummary } from '../shaft-speed.js';
import type { StageDefinition } from '../stage.js';
import { NO_FINITE_SAMPLES, noFiniteSamples, pct, secs, type QualityThresholds, type Severity } from './flag.js';

const round = (v: number) => Number(v.toPrecision(4));

/**
 * Share of the recording the good pulse intervals cover: their total time over the duration less two mean intervals (the first
 * pulse may come up to one interval after the start, the last one before the end), at most 1; 0 without a good interval.
 */
export function pulseCoverage(coveredS: number, goodIntervals: number, durationS: number): number {
  if (goodIntervals <= 0 || !(coveredS > 0)) return 0;
  const expected = durationS - (2 * coveredS) / goodIntervals;
  return expected <= coveredS ? 1 : coveredS / expected;
}

/**
 * What a shaft at rest at the train's ends takes out of the coverage's duration (`outS`: from the start to a first pulse that
 * starts from rest, and from a last pulse that slows to rest to the end, since no pulse could come there), how long it sat at
 * rest (`atRestS`), and that in words (null without rest). A train that merely stops has neither (`fromRest`, `toRest` null).
 */
export function restAtEnds(s: Pick<SpeedSummary, 'fromRest' | 'toRest'>, durationS: number): { outS: number; atRestS: number; words: string | null } {
  const before = s.fromRest ? Math.max(0, s.fromRest.restS) : 0, after = s.toRest ? Math.max(0, durationS - s.toRest.restS) : 0;
  const outS = (s.fromRest ? s.fromRest.pulseS : 0) + (s.toRest ? Math.max(0, durationS - s.toRest.pulseS) : 0);
  const parts = [
    before > 0 ? `at rest for ${secs(before)} before it started turning at ${secs(s.fromRest!.restS)}` : null,
    after > 0 ? `at rest for ${secs(after)} after it came to rest at ${secs(s.toRest!.restS)}` : null,
  ].filter((w) => w != null);
  return { outS, atRestS: before + after, words: parts.length ? `the shaft was ${parts.join(' and ')}, time left out of the coverage` : null };
}

/**
 * Whether the tacho shows no pulse at all in a signal that moves: no level stood clear of its noise in any second (and more than
 * one sample stands out of it), or no edge crossed the trigger while the signal spans more than two converter steps (IEEE Std 1241:
 * less is a converter's flicker). A flat signal is a shaft at rest; one edge or more, a shaft too slow for two good pulses in a row.
 */
export function noPulseFound(s: SpeedSummary, spread: number, step: number | null): boolean {
  if (!s.trigger) return s.none != null && !s.none.allFlat && !s.none.still;
  return s.edges === 0 && spread > 2 * (step ?? 0);
}

/** What a second without a clear pulse looked like: its rest level, its noise and how far it reached from the rest, against what a pulse needs. */
export function clearestWords(c: RestLook & { atS: number }, unit: string): string {
  const by = Math.max(c.up, c.down) / c.noise;
  return `the clearest second, from ${round(c.atS)} s, rests at ${round(c.rest)} ${unit} with noise of ${round(c.noise)} ${unit} (a robust standard deviation) and reaches ${round(c.up)} ${unit} above and ${round(c.down)} ${unit} below that level, ${Number.isFinite(by) ? round(by) : 'no'} times the noise, ${by > REST_CLEAR_SIGMAS ? 'but not as a pulse\'s two lobes, one close after the other, above and below it' : `where a pulse must reach over ${REST_CLEAR_SIGMAS} times`}`;
}

/** What to declare where the pulses are there but too small to be found: a level between the rest and their peak. */
export const smallPulsesTodo = 'or, where pulses are there but small, trigger_level between the rest level and their peak and trigger_hysteresis below their height';

export const pulseTrain: StageDefinition<QualityThresholds> = {
  group: 'quality',
  section: null,
  spectral: false,
  columns: () => [{ name: 'pulse_coverage', unit: '1', description: 'Tacho channels: share of the recording the good pulse intervals cover (the pulse_train flag\'s value); null when the channel has no finite samples.' }],
  create(ctx, q) {
    const speed = ctx.tacho ? speedOf(ctx, speedOptionsOf(q.pulse_train)) : null;
    const moments = ctx.tacho ? momentsOf(ctx) : null;
    let n = 0;
    return {
      push(x) { n += x.length; },
      finish() {
        const t = q.pulse_train;
        const threshold = `warn: good pulse intervals cover < ${pct(t.warn_coverage)} of the recording, or pulse faults exceed ${pct(t.warn_fault_ratio)} of the good intervals; fail: < ${pct(t.fail_coverage)}, or missing and irregular pulses exceed ${pct(t.fail_fault_ratio)} of them (then no speed, revolutions or pulse counts either); fail: no pulse found in a signal that moves (no level clear of its noise, or no edge across the trigger); warn: no two good pulses in a row; note: a flat signal (a shaft at rest), any pulse fault`;
        if (!speed) {
          ctx.flag({ name: 'pulse_train', severity: 'ok', value: null, threshold, evidence: {}, message: 'not a tacho channel (no pulses_per_rev)' });
          return { pulse_coverage: null };
        }
        const m = moments!.moments();
        if (noFiniteSamples(n, m.n)) {
          // No sample to find a pulse in: no coverage rather than none, and no "flat signal" either; the dropout flag fails it.
          ctx.flag({ name: 'pulse_train', severity: 'ok', value: null, threshold, evidence: {}, message: NO_FINITE_SAMPLES });
          return { pulse_coverage: null };
        }
        const s = speed.summary(), fs = ctx.sampleRate, p = ctx.tacho!.pulsesPerRev;
        const durationS = n / fs, good = Math.round(s.revolutions * p);
        const coveredS = s.coveredS;
        // Time at rest is no time uncovered: a shaft that coasted to rest (or started from rest) gives no pulse there.
        const rest = restAtEnds(s, durationS);
        const coverage = pulseCoverage(coveredS, good, durationS - rest.outS);
        const restWords = rest.words ? `; ${rest.words}` : '';
        const lost = s.missing.count + s.irregular.count, faults = lost + s.extra.count;
        const tr = s.trigger;
        const trigger = tr ? `edges timed ${tr.falling ? 'falling through' : 'at'} ${round(tr.level)} ${ctx.unit}, hysteresis ${round(tr.hysteresis)} ${ctx.unit}${s.found ? ' (found from the signal)' : ' (declared)'}` : 'no trigger level found';
        // Pulses lost again and again at one mark point at the mark or the pickup before the trigger: the likely cause first.
        const cause = s.missingAtOnePlace ? `the pulses go missing at one place in the revolution: check the reflective tape or target there (missing or dirty) and the pickup's gap first, then ` : '';
        const todo = cause + (tr && !s.found ? 'check the declared trigger_level and trigger_hysteresis against the pulses, and pulses_per_rev' : 'declare trigger_level and trigger_hysteresis between the pulses\' low and high levels, and check pulses_per_rev');
        const found = `the good pulse intervals cover ${pct(coverage)} of the ${secs(durationS)} recording (${Number(s.revolutions.toFixed(2))} revolutions); ${faults} pulse faults (${s.missing.count} missing, ${s.extra.count} extra, ${s.irregular.count} irregular) against ${good} good intervals; ${trigger}${restWords}`;
        let severity: Severity = 'ok', message: string;
        if (noPulseFound(s, m.n ? m.max - m.min : 0, ctx.stepSize)) {
          // A tacho is there for its pulses: a signal that moves without one (noise, a sensor unplugged or unpowered, a trigger the
          // pulses never cross) leaves every speed and order figure unknown, as a dead sensor leaves its channel's figures.
          severity = 'fail';
          const clearest = s.none?.clearest;
          const what = tr ? `no edge crossed the trigger (${trigger}) while the signal ranged ${round(m.min)} to ${round(m.max)} ${ctx.unit}`
            : `no second holds a pulse standing clear of the noise, and more than one sample stands out of it (the signal ranged ${round(m.min)} to ${round(m.max)} ${ctx.unit}${clearest ? `; ${clearestWords(clearest, ctx.unit)}` : ''})`;
          message = `no pulse train found: ${what}; check the tacho's wiring and supply, ${tr && !s.found ? 'the declared trigger_level and trigger_hysteresis against that range' : `declare trigger_level and trigger_hysteresis between the pulses' low and high levels, ${smallPulsesTodo}`}, and pulses_per_rev`;
        } else if (!tr || good === 0) {
          // No speed is no wrong speed: a shaft at rest gives no pulses (a flat signal is a note; a dead sensor fails flatline), while
          // pulses that never make two good intervals in a row, or one lone pulse, leave the speed unknown (warn).
          const flat = !tr && s.none?.allFlat === true;
          severity = flat ? 'note' : 'warn';
          message = `no speed: ${tr ? 'no two consecutive good pulses' : flat ? 'the signal is flat' : 'no pulse standing clear of the noise'} (${trigger}); a shaft at rest or a disconnected sensor reads so too; else ${todo}`;
        } else if (s.withheld || coverage < t.fail_coverage) {
          // The speed product withholds by the same threshold (trainBroken), so the table gives no speed on a train failed for its
          // faults, and withholds none from a train that passes. Extra pulses leave each good interval whole and do not count.
          severity = 'fail';
          message = s.withheld
            ? `${found}: the pulse train does not hold together (missing and irregular pulses beyond ${pct(t.fail_fault_ratio)} of the good intervals), so no speed is given (nor revolutions or pulse counts) rather than figures resting on what is likely noise or a level the pulses leave; ${todo}`
            : `${found}: the pulse train does not hold together, so the speed figures rest on what is likely noise or a level the pulses leave; ${todo}`;
        } else if (coverage < t.warn_coverage || faults > t.warn_fault_ratio * good) {
          severity = 'warn';
          message = coverage < t.warn_coverage
            ? `${found}: speed_mean_rpm, speed_min_rpm, speed_max_rpm and the windows' speed_rpm describe only the covered part, and the order figures take that speed for the whole recording; ${todo}`
            : `${found}: the speed rests on the good intervals, the faulty pulses left out${s.extra.count > lost ? ' (an extra pulse in many revolutions: a second mark, or interference on the pickup)' : ''}; ${todo}`;
        } else {
          if (faults > 0) severity = 'note';
          message = faults > 0 ? `${found}: those intervals are left out of the speed, which rests on the rest` : `the good pulse intervals cover ${pct(coverage)} of the recording, with no pulse fault${restWords}`;
        }
        ctx.flag({
          name: 'pulse_train', severity, value: coverage, threshold, message,
          evidence: {
            coverage, covered_s: coveredS, duration_s: durationS, at_rest_s: rest.atRestS, revolutions: s.revolutions, good_intervals: good, missing: s.missing.count, extra: s.extra.count, irregular: s.irregular.count,
            trigger_level: tr?.level ?? null, trigger_hysteresis: tr?.hysteresis ?? null, trigger_found: tr ? (s.found ? 'found' : 'declared') : null,
          },
        });
        return { pulse_coverage: coverage };
      },
    };
  },
};
