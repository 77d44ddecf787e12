// Shaft speed on a tacho channel's row: mean, slowest and fastest revolution, the revolutions they rest on, and the pulse faults.
import { momentsOf } from './fused/moments.js';
import { noFiniteSamples } from './quality/flag.js';
import { clearestWords, noPulseFound, smallPulsesTodo } from './quality/pulse-train.js';
import { speedOf, SPEED_DEFAULTS, type PulseFaults, type SpeedOptions } from './shaft-speed.js';
import type { StageDefinition } from './stage.js';

const at = (f: PulseFaults) => `${f.times_s.map((t) => `${t.toFixed(4)} s`).join(', ')}${f.count > f.times_s.length ? ` and ${f.count - f.times_s.length} more` : ''}`;
const round = (v: number) => Number(v.toPrecision(4));

export const speed: StageDefinition<SpeedOptions> = {
  group: 'speed',
  section: null,
  spectral: false,
  columns: () => [
    { name: 'speed_mean_rpm', unit: 'rpm', description: 'Tacho channels: shaft speed over the recording, revolutions of the good pulse intervals / their duration.' },
    { name: 'speed_min_rpm', unit: 'rpm', description: 'Tacho channels: speed of the slowest revolution (pulses_per_rev consecutive good intervals).' },
    { name: 'speed_max_rpm', unit: 'rpm', description: 'Tacho channels: speed of the fastest revolution.' },
    { name: 'revolutions', unit: '1', description: 'Tacho channels: revolutions the speed figures rest on (good pulse intervals / pulses_per_rev); null, as the speed, when the train does not hold together, no pulse train is found or the channel has no finite samples.' },
    { name: 'pulses_missing', unit: '1', description: 'Tacho channels: pulses missing from the train (an interval of whole multiples of the expected one); null when the train does not hold together, no pulse train is found or the channel has no finite samples.' },
    { name: 'pulses_extra', unit: '1', description: 'Tacho channels: extra pulses between two good ones a whole interval apart; null when the train does not hold together, no pulse train is found or the channel has no finite samples.' },
  ],
  create(ctx, o = SPEED_DEFAULTS) {
    if (!ctx.tacho) return { push() {}, finish: () => ({}) };
    const product = speedOf(ctx, o);
    const moments = momentsOf(ctx);
    return {
      push() {},
      finish() {
        const s = product.summary();
        const unit = ctx.unit;
        // No finite sample, so no pulse was looked for: no count, and no note on a trigger level (the dropout flag fails it).
        const m = moments.moments();
        if (noFiniteSamples(m.n + m.nonFinite, m.n)) return { speed_mean_rpm: null, speed_min_rpm: null, speed_max_rpm: null, revolutions: null, pulses_missing: null, pulses_extra: null };
        // A signal that moves without a pulse (the pulse_train flag's failure): nothing was counted, so no count is given.
        const noTrain = noPulseFound(s, m.n ? m.max - m.min : 0, ctx.stepSize);
        const emptied = noTrain ? '; revolutions and the pulse counts are left empty (null)' : '';
        const tr = s.trigger;
        const where = s.foundAtS === 0 ? 'the first second'
          : s.foundAcross ? `the second from ${round(s.foundAtS)} s with the extremes of the seconds before it (pulses one sample wide, at most one a second)`
          : `the second from ${round(s.foundAtS)} s (no earlier second holds a pulse standing clear of its noise)`;
        const look = s.foundLook;
        const shape = look && s.foundShape === 'bipolar' ? ` (the pulses leave a rest level of ${round(look.rest)} ${unit} both ways, to ${round(look.rest + look.up)} and ${round(look.rest - look.down)} ${unit}: each edge is timed where a pulse ${tr?.falling ? 'falls' : 'rises'} through the rest level between its lobes)` : '';
        if (tr && s.found) ctx.note(`${ctx.name}: tacho edges timed ${tr.falling ? 'falling through' : 'at'} ${round(tr.level)} ${unit}, hysteresis ${round(tr.hysteresis)} ${unit}, found from ${where}${shape}; declare trigger_level and trigger_hysteresis to fix them`);
        if (s.followed.count) ctx.note(`${ctx.name}: the tacho signal's levels drifted, so the trigger level followed them ${s.followed.count} time(s) from ${round(s.followed.firstS)} s on, between ${round(s.followed.lowest)} and ${round(s.followed.highest)} ${unit}; declare trigger_level and trigger_hysteresis to fix it`);
        const none = s.none ?? { firstFlat: true, allFlat: true, seconds: 0, clearest: null };
        const clearest = none.clearest ? ` (${clearestWords(none.clearest, unit)})` : '';
        if (!tr) ctx.note(`${ctx.name}: tacho signal ${none.firstFlat ? 'flat' : 'only noise'} over the first second; ${none.allFlat ? 'flat in every second' : 'no second holds a pulse standing clear of its noise'} of the ${round(none.seconds)} s read${clearest}; no trigger level found, so no speed${emptied}; declare trigger_level and trigger_hysteresis${none.allFlat ? '' : ` between the pulses' low and high levels, ${smallPulsesTodo}`}`);
        else if (s.withheld) ctx.note(`${ctx.name}: no speed: ${s.missing.count} missing and ${s.irregular.count} irregular tacho pulse(s) against ${Math.round(s.revolutions * ctx.tacho!.pulsesPerRev)} good intervals, beyond fail_fault_ratio ${o.fail_fault_ratio} of them, so the pulse train does not hold together (a trigger in noise, or a level the pulses leave): the speed columns, revolutions, the pulse counts, the windows' speed and the order figures are left empty (null); declare trigger_level and trigger_hysteresis, and check pulses_per_rev`);
        else if (s.meanRpm == null) ctx.note(`${ctx.name}: no two consecutive good tacho pulses (${s.edges} edges at ${round(tr.level)} ${unit})${emptied}; check the trigger level and pulses_per_rev`);
        if (s.missing.count && !s.withheld) ctx.note(`${ctx.name}: ${s.missing.count} tacho pulse(s) missing near ${at(s.missing)}; those intervals are left out of the speed`);
        if (s.extra.count && !s.withheld) ctx.note(`${ctx.name}: ${s.extra.count} extra tacho pulse(s) at ${at(s.extra)}; ignored`);
        if (s.irregular.count && !s.withheld) ctx.note(`${ctx.name}: ${s.irregular.count} irregular tacho interval(s) from ${at(s.irregular)}, neither whole pulses missing nor one extra; left out of the speed`);
        // A train that does not hold together is counted against a rhythm that is likely noise: its counts go with its speed.
        const kept = <T>(v: T) => (s.withheld || noTrain ? null : v);
        return {
          speed_mean_rpm: s.meanRpm, speed_min_rpm: s.minRpm, speed_max_rpm: s.maxRpm, revolutions: kept(s.revolutions),
          pulses_missing: kept(s.missing.count), pulses_extra: kept(s.extra.count),
        };
      },
    };
  },
};
