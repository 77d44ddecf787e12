// The feature groups quern computes, in column order, and how the spec's sections turn them on. Adding a stage means adding it here.
import type { ChannelSelector, ReductionSpec } from '../spec/reduction.js';
import { bands } from './bands.js';
import type { FilterSpec } from './dsp/butterworth.js';
import type { WelchOptions } from './dsp/welch.js';
import { envelope, MIN_PROMINENCE_DB } from './envelope.js';
import { mtvv } from './mtvv.js';
import { octaveBands } from './octave.js';
import { rainflow } from './rainflow.js';
import { soundEnergy } from './sound-energy.js';
import { soundMaxima } from './sound-maxima.js';
import { MIN_RPM, orders, orderTacho } from './orders.js';
import { keptSpectrum } from './spectra.js';
import { DEFAULT_SPECTRUM, spectrum } from './spectrum.js';
import { speedOptionsOf } from './shaft-speed.js';
import { speed } from './speed.js';
import type { ColumnSpec, SpecSection, StageDefinition } from './stage.js';
import { statistics } from './stats.js';
import { timeWeighting } from './time-weighting.js';
import { velocity } from './velocity.js';
import { windows } from './windows.js';
import { aliasing } from './quality/aliasing.js';
import { declaration } from './quality/declaration.js';
import { dropout } from './quality/dropout.js';
import { evidence } from './quality/evidence.js';
import { flatline } from './quality/flatline.js';
import { noiseFloor } from './quality/noise-floor.js';
import { thresholdsOf } from './quality/flag.js';
import { offset } from './quality/offset.js';
import { peakCapture } from './quality/peak-capture.js';
import { pulseTrain } from './quality/pulse-train.js';
import { repeatedBlocks } from './quality/repeated-blocks.js';
import { resolution } from './quality/resolution.js';
import { saturation } from './quality/saturation.js';
import { spikes } from './quality/spikes.js';

export interface ActiveStage { definition: StageDefinition<any>; options: any; only: ChannelSelector | undefined }

/** The quality flags, in report order: they run on every channel whatever the spec. */
const QUALITY_STAGES = [saturation, aliasing, resolution, peakCapture, flatline, noiseFloor, dropout, repeatedBlocks, offset, spikes, declaration, pulseTrain, evidence];

/** Every stage `activeStages` may turn on, in column order: what each declares (its section, whether it is spectral) is read from here. */
export const STAGES: readonly StageDefinition<any>[] = [
  statistics, spectrum, keptSpectrum, bands, octaveBands, velocity, windows, timeWeighting, mtvv, envelope, soundEnergy, soundMaxima,
  rainflow, speed, orders, orderTacho, ...QUALITY_STAGES,
];

/** The spec sections that take `only:`, in the spec's order: those the stages come from. */
export const SELECTED_SECTIONS: readonly SpecSection[] = [...new Set(STAGES.flatMap((s) => (s.section ? [s.section] : [])))];

/** The feature groups whose figures read the channel's shared spectrum: those with a stage declaring itself spectral. */
export const SPECTRAL_GROUPS: readonly string[] = [...new Set(STAGES.filter((s) => s.spectral).map((s) => s.group))];

/** Whether the channel has figures from the shared spectrum: one of those groups, among `groups`, gave it a column. */
export const hasSpectralFigures = (outputs: Record<string, { columns: Record<string, unknown>[] }>, groups: readonly string[], c: number) =>
  groups.some((g) => SPECTRAL_GROUPS.includes(g) && Object.keys(outputs[g]?.columns[c] ?? {}).length > 0);

type Ranges = [number, number][];
const rangesOf = (v: Ranges | { ranges: Ranges } | undefined): Ranges => (Array.isArray(v) ? v : v?.ranges ?? []);
const onlyOf = (v: unknown): ChannelSelector | undefined => (v && !Array.isArray(v) && typeof v === 'object' ? (v as { only?: ChannelSelector }).only : undefined);

/** A selector as a comparable text: none (every channel) apart from an empty one (no channel). */
const selectorText = (only: ChannelSelector | undefined) => (only ? JSON.stringify([only.names ?? [], only.quantities ?? []]) : 'every channel');

/**
 * The octave sets as runs of consecutive sets with one `only:` selector: each run one stage on the channels its selector
 * chooses (a set without `only:` on every channel), so every set is computed where its own selector says, its columns in
 * the spec's order; sets sharing a selector share a stage, and its finer spectrum, as one set list did.
 */
export function octaveRuns<S extends { only?: ChannelSelector }>(value: S | S[]): { sets: S[]; only: ChannelSelector | undefined }[] {
  const runs: { sets: S[]; only: ChannelSelector | undefined }[] = [];
  for (const set of Array.isArray(value) ? value : [value]) {
    const last = runs.at(-1);
    if (last && selectorText(last.only) === selectorText(set.only)) last.sets.push(set);
    else runs.push({ sets: [set], only: set.only });
  }
  return runs;
}

/** The stages a spec asks for: a section present turns its group on; statistics and quality flags always run. */
export function activeStages(spec: ReductionSpec): ActiveStage[] {
  const welch: WelchOptions = { ...DEFAULT_SPECTRUM, ...(spec.spectrum ?? {}) };
  delete (welch as { only?: unknown }).only;
  // A tacho's speed is withheld exactly where its pulse_train flag fails for faults: every reader of the speed takes that threshold.
  const speedOptions = speedOptionsOf(thresholdsOf(spec.quality).pulse_train);
  const out: ActiveStage[] = [{ definition: statistics, options: {}, only: spec.statistics?.only }];
  if (spec.spectrum) {
    out.push({ definition: spectrum, options: welch, only: spec.spectrum.only });
    out.push({ definition: keptSpectrum, options: welch, only: spec.spectrum.only });
  }
  if (spec.bands) out.push({ definition: bands, options: { ranges: rangesOf(spec.bands), spectrum: welch }, only: onlyOf(spec.bands) });
  if (spec.octave_bands) {
    for (const run of octaveRuns(spec.octave_bands)) {
      const sets = run.sets.map((s) => ({ fraction: s.fraction ?? 3, from: s.from ?? 25, to: s.to ?? 10000, ...(s.levels_db ? { levels_db: true } : {}) }));
      out.push({ definition: octaveBands, options: { sets, spectrum: welch }, only: run.only });
    }
  }
  if (spec.velocity_bands) out.push({ definition: velocity, options: { ranges: rangesOf(spec.velocity_bands), spectrum: welch }, only: onlyOf(spec.velocity_bands) ?? { quantities: ['acceleration'] } });
  if (spec.windows) out.push({ definition: windows, options: { length_s: spec.windows.length_s ?? 1, hop_s: spec.windows.hop_s ?? spec.windows.length_s ?? 1, speed: speedOptions }, only: spec.windows.only });
  if (spec.time_weighting_s) {
    const v = spec.time_weighting_s;
    out.push({ definition: timeWeighting, options: { constants_s: Array.isArray(v) ? v : v.constants_s }, only: onlyOf(v) });
  }
  if (spec.mtvv) out.push({ definition: mtvv, options: { integration_s: spec.mtvv.integration_s ?? 1 }, only: spec.mtvv.only });
  if (spec.envelope) {
    const filter: FilterSpec = { zero_phase: false, ...spec.envelope.filter };
    out.push({ definition: envelope, options: { filter, spectrum: welch, min_prominence_db: spec.envelope.min_prominence_db ?? MIN_PROMINENCE_DB }, only: spec.envelope.only });
  }
  if (spec.sound_level) {
    const only = spec.sound_level.only ?? { quantities: ['sound_pressure'] };
    out.push({ definition: soundEnergy, options: { spectrum: welch }, only }, { definition: soundMaxima, options: {}, only });
  }
  if (spec.rainflow) {
    const r = spec.rainflow;
    out.push({ definition: rainflow, options: { slope: r.slope ?? 5, gate: r.gate ?? 0, bins: r.bins ?? null }, only: r.only ?? { quantities: ['strain', 'stress'] } });
  }
  // A channel declared with pulses_per_rev gets its shaft speed whatever the spec: the declaration asks for it.
  out.push({ definition: speed, options: speedOptions, only: undefined });
  if (spec.orders) {
    const options = { orders: spec.orders.orders ?? [1, 2], width: spec.orders.width ?? 0.5, min_rpm: spec.orders.min_rpm ?? MIN_RPM, spectrum: welch, speed: speedOptions };
    out.push({ definition: orders, options, only: spec.orders.only }, { definition: orderTacho, options: speedOptions, only: undefined });
  }
  // The data-quality verdict always runs: a figure is only worth as much as the recording under it.
  const q = { ...thresholdsOf(spec.quality), spectrum: welch };
  for (const definition of QUALITY_STAGES) {
    out.push({ definition, options: q, only: undefined });
  }
  return out;
}

/** Flag names in report order. */
export const FLAG_NAMES = ['saturation', 'aliasing', 'resolution', 'peak_capture', 'flatline', 'noise_floor', 'dropout', 'repeated_blocks', 'offset', 'spikes', 'declaration', 'pulse_train', 'velocity_low_edge'] as const;

export function featureColumns(spec: ReductionSpec): ColumnSpec[] {
  return activeStages(spec).flatMap((s) => s.definition.columns(s.options));
}
