// A data-quality flag: a value held against a threshold, a severity, the evidence and the action to take.

/**
 * ok: nothing found. note: worth knowing, no figure at risk beyond the tolerance the threshold states. warn: a figure the spec
 * computes may be wrong by more than that; the message names which. fail: the channel's figures are not to be used.
 */
export type Severity = 'ok' | 'note' | 'warn' | 'fail';

/** Severities from the least to the most serious. */
export const SEVERITIES: readonly Severity[] = ['ok', 'note', 'warn', 'fail'];

/** Channels the report pictures: those whose figures are at risk. */
export const NEEDS_A_LOOK: ReadonlySet<Severity> = new Set(['warn', 'fail']);

export interface Flag {
  name: string;
  severity: Severity;
  /** The figure the flag judges (its column in features.parquet), null when it could not be assessed. */
  value: number | null;
  /** The thresholds it was held against, in words. */
  threshold: string;
  /** How many samples, and where in time (seconds from the start). */
  evidence: Record<string, number | string | null>;
  /** One line: what was found and what to do. */
  message: string;
  /**
   * Set on a check that could not be made for want of a declaration or of what the file keeps (severity ok, value null):
   * why, and what to declare. The run names such checks apart, so that ok is not read as checked.
   */
  not_assessed?: string;
  /**
   * Where the channel has figures read from the shared spectrum, the severity and message then, when they differ (the dropout
   * flag's spectrum share). The results' assembly chooses (`forFigures`), so a stored quality result holds whichever spectral
   * sections the spec turns on, and toggling one recomputes no quality flag.
   */
  spectral?: { severity: Severity; message: string };
}

/** What a flag that judges the signal says on a channel whose every sample is missing, its value and column null. */
export const NO_FINITE_SAMPLES = 'not assessed: the channel has no finite samples (the dropout flag fails it)';

/** Whether a channel of `n` samples, `finite` of them finite, has none to measure (a recording of no samples fails before). */
export const noFiniteSamples = (n: number, finite: number) => n > 0 && finite === 0;

const RANK: Record<Severity, number> = { ok: 0, note: 1, warn: 2, fail: 3 };
export const worst = (severities: Severity[]): Severity => severities.reduce<Severity>((a, b) => (RANK[b] > RANK[a] ? b : a), 'ok');

/** Quality thresholds (spec section `quality`), each default with where it comes from. */
export interface QualityThresholds {
  saturation: { fail_fraction: number; fail_run: number };
  aliasing: { recommended_ratio: number; top_band: number; top_band_warn_fraction: number; above_declared_warn_fraction: number; converter_floor_factor: number };
  resolution: { note_error: number; warn_error: number; fail_error: number; static_quantities: string[] };
  peak_capture: { note_shortfall: number; warn_shortfall: number };
  flatline: { fail_steps: number; warn_run_s: number; warn_stuck_s: number; stuck_repeat_fraction: number; stuck_stretch_s: number; warn_stuck_fraction: number };
  noise_floor: { warn_db: number; fail_db: number; window_s: number; converter_floor_steps: number; live_above_db: number };
  dropout: { fail_missing_fraction: number; warn_missing_fraction: number; warn_zero_run_s: number; warn_gap_s: number; fail_gap_s: number; warn_spectrum_coverage: number };
  repeated_blocks: { periodic_fraction: number };
  offset: { quantities: string[]; warn_ratio: number; warn_drift_ratio: number; warn_rms_excess: number; warn_above_wander: number };
  spikes: { robust_sigmas: number; fail_fraction: number };
  declaration: { duration_tolerance: number };
  pulse_train: { warn_coverage: number; fail_coverage: number; warn_fault_ratio: number; fail_fault_ratio: number };
}

// Calibration: a threshold warns where a figure the spec computes could be off by more than about 5 % (0.4 dB), the
// figure named in the message; findings below that are notes. The 5 % tolerance is our choice.
export const QUALITY_DEFAULTS: QualityThresholds = {
  // Any sample at the range warns: the peak, crest factor and kurtosis of clipped data say nothing beyond the range (common practice);
  // failing at 1e-4 of the samples or a flat top of 3 samples is our choice.
  saturation: { fail_fraction: 1e-4, fail_run: 3 },
  // fs ≥ 2.56 × the highest frequency is common practice in vibration analysers (room for the anti-alias filter's roll-off;
  // below it band figures near that frequency read low); the top-band share (top 10 % of the band holding over 5 % of the power) is our choice.
  // Power between the declared highest frequency and Nyquist is content the declaration excludes (or folded from above Nyquist):
  // a share p of it raises the whole-band RMS by 1/√(1 − p) − 1, 5 % at p = 9.3 % (derived).
  // White quantisation noise puts a tenth of its power in the top tenth of the band by definition: a share whose density is
  // within 4× (6 dB) of the ideal step's, q²/(6·fs) (IEEE Std 1241), is the converter's own noise, as a converter one effective
  // bit short of its nominal bits, or a front end's noise of half a step beside it, makes it; folded content hidden under that adds
  // less power than the step's own noise, which the resolution flag judges (our choice).
  aliasing: { recommended_ratio: 2.56, top_band: 0.1, top_band_warn_fraction: 0.05, above_declared_warn_fraction: 0.093, converter_floor_factor: 4 },
  // The error the step puts on the channel's own figures: its peak, half a step of it (an ideal quantiser, IEEE Std 1241), and its
  // RMS (mean removed), √(1 + q²/(12·σs²)) − 1 (uncorrelated powers add, common practice). Note above 1 %; warn above 5 %, the
  // flags' tolerance; fail above 15 %, a peak resting on about three steps or a variation of half a step RMS (our choices).
  // Strain, stress, pressure and temperature are read for their level: a static reading of them, its mean far from zero and
  // resolved to within half a step, keeps its figure whatever its variation's few steps say (common practice).
  resolution: { note_error: 0.01, warn_error: 0.05, fail_error: 0.15, static_quantities: ['strain', 'stress', 'pressure', 'temperature'] },
  // Shortfall of the sampled peak (the largest sample, as the peak column defines it) below the 4× true peak of the band-limited
  // signal (ITU-R BS.1770-4 Annex 2). Note above 5 %, the tolerance above (ours). Warn above 25 % (≈ 2.5 dB): beyond what sampling
  // at 2.56 × the highest frequency, common practice, costs a signal that keeps to it (at most 22 % in 600 records of noise
  // band-limited to fs/2.56, measured for this choice), so content beyond the declaration or a short impact near the top of the
  // band is being missed, and peak and crest factor mislead.
  peak_capture: { note_shortfall: 0.05, warn_shortfall: 0.25 },
  // A spread of at most 2 converter steps is a dead channel; a constant stretch of 1 s is a stuck converter or a loose contact,
  // whose figures describe the fault, not the signal (our choices). A signal that otherwise moves between samples (fewer than 20 %
  // of them repeat the one before, our choice) and holds one value for 0.1 s is stuck: a 1 s window holding it reads its RMS up to
  // 1 − √0.9 = 5.1 % low (derived); slow signals that rest on their codes repeat far more often and keep the 1 s rule. A stretch
  // left for a value at most two steps of the data away is a slow signal leaving its code (an ideal quantiser's codes differ by
  // whole bins, IEEE Std 1241), not a held value, which jumps to where the signal went: neither rule takes it, nor the share of short ones.
  flatline: { fail_steps: 2, warn_run_s: 1, warn_stuck_s: 0.1, stuck_repeat_fraction: 0.2, stuck_stretch_s: 0.01, warn_stuck_fraction: 0.1 },
  // The chain's noise (declared) adds its power to the signal's: a channel d dB above it reads RMS 1/√(1 − 10^(−d/10)) − 1 high,
  // 5 % at 10.3 dB (derived), so it warns below that. Within 3 dB the noise holds at least half the power: the figures describe
  // the chain, not the machine, and it fails (our choice). Sound power standards correct levels for background noise alike
  // between 6 and 15 dB above it and take none above 15 dB (ISO 3744:2010, from memory). A window of 1 s (windows.parquet's
  // default) that falls within 3 dB of the floor in a channel above it warns: that window's figures describe the chain (our choice).
  // Without a declared floor, the converter's step gives one: an ideal converter whose input is quieter than a step reads one
  // code or q/√12 = 0.29 steps RMS (IEEE Std 1241), and an open or unpowered input with its amplifier's noise reads ±1–2 codes,
  // 0.5–1 step RMS (common practice, from memory); a window at most 2 steps RMS is at the converter's floor (our choice, twice
  // that). It warns only where the other windows stand 20 dB or more above it (20 steps RMS): a channel that otherwise works
  // far above its steps, as a range sized to the largest level expected makes a running machine's (common practice), fell to
  // the converter's floor; a channel quiet throughout is the resolution flag's (our choice). A machine at rest may read there
  // too: an IEPE accelerometer's broadband noise, some 0.1–1 mg (from memory), lies below a 16-bit step of ±500 m/s² (1.6 mg).
  noise_floor: { warn_db: 10.3, fail_db: 3, window_s: 1, converter_floor_steps: 2, live_above_db: 20 },
  // Missing samples are left out of every figure: below 0.1 % that shifts none by more than a fraction of a per cent (note); from
  // 0.1 % the peak or an event may be among them (warn); from 1 % the channel fails. Exact zeros for 0.1 s are a logger's gap
  // written as zeros, which pull RMS and the window figures down (warn). Our choices. A gap of missing samples as long as the F
  // time constant (0.125 s, IEC 61672-1) can hide a whole event from the time-weighted maxima (warn); one as long as MTVV's 1 s
  // integration (ISO 2631-1, from memory) a whole transient, and it leaves no 1 s window of windows.parquet whole (fail).
  // Gaps that leave the spectrum's segments (or its one longest gap-free stretch) spanning under half of the recording make
  // the spectral figures those of the lesser part of it (warn). Our choice.
  dropout: { fail_missing_fraction: 0.01, warn_missing_fraction: 0.001, warn_zero_run_s: 0.1, warn_gap_s: 0.125, fail_gap_s: 1, warn_spectrum_coverage: 0.5 },
  // Measured data never repeats a block of 64 samples or more exactly (converter noise; common practice): a stretch that does is a
  // block sent again, lost data counted as measured (warn). A signal repeating at one lag over 90 % of the recording is made, not
  // measured (a tone locked to the sampling, a looped file): said, not warned (our choice).
  repeated_blocks: { periodic_fraction: 0.9 },
  // Piezoelectric accelerometers and microphones pass no DC (common practice). An offset of r standard deviations raises RMS by
  // √(1 + r²) − 1, 5 % at r = 0.32; a drift whose fitted line rises d standard deviations (of the signal around it) across the
  // recording by √(1 + d²/12) − 1, 5 % at d = 1.1 (derived). Together, with a step of the 1 s means, they warn where RMS reads
  // 5 % above the RMS with that slow part taken out (the tolerance above). A live signal's own content below 1 Hz (1/f noise
  // down to 0.1 Hz) moves the mean, the line and the step of a short recording by chance as much as it makes the 1 s means
  // wander from one second to the next; an offset, a drift or a step stands far above that wander. So any of these warns only
  // where the slow part's RMS over the 1 s means is at least 5.5 times their wander (meanWander): measured, 200 seeded trials of
  // 10 s of white noise plus as strong 1/f noise reach at most 4.7, a 10 s thermal drift (τ = 1 s) on a tone 6.0, a step of
  // 15 over 20 RMS of white noise 11 (our choice).
  offset: { quantities: ['acceleration', 'sound_pressure'], warn_ratio: 0.32, warn_drift_ratio: 1.1, warn_rms_excess: 0.05, warn_above_wander: 5.5 },
  // Isolated samples beyond 10 robust standard deviations (1.4826 × MAD) set the peak and crest factor and raise kurtosis: any warns;
  // 0.1 % of the samples fails (our choices).
  spikes: { robust_sigmas: 10, fail_fraction: 1e-3 },
  // A recording more than 1 % away from its declared duration is noted: the figures describe what was captured (our choice).
  declaration: { duration_tolerance: 0.01 },
  // A tacho's good pulse intervals (the two ends excused) covering less than 80 % of the recording leave a fifth of it without a
  // speed, which the speed figures and the order figures then stand for (warn); below half they describe the lesser part, and a
  // train that holds together so little is a trigger on noise or a level the pulses leave (fail). Faults (missing, extra and
  // irregular pulses) beyond one in ten good intervals mean a trigger or pulses_per_rev to check (warn); more faults than good
  // intervals, a train that is mostly faults (fail). Our choices.
  pulse_train: { warn_coverage: 0.8, fail_coverage: 0.5, warn_fault_ratio: 0.1, fail_fault_ratio: 1 },
};

/** The flag as the channel's figures have it: its spectral wording where the channel has spectral figures, never the choice itself. */
export function forFigures(f: Flag, spectral: boolean): Flag {
  if (!f.spectral) return f;
  const { spectral: when, ...plain } = f;
  return spectral ? { ...plain, ...when } : plain;
}

export type QualitySpec = { [K in keyof QualityThresholds]?: Partial<QualityThresholds[K]> };

export function thresholdsOf(spec: QualitySpec | undefined): QualityThresholds {
  const out = structuredClone(QUALITY_DEFAULTS);
  for (const k of Object.keys(out) as (keyof QualityThresholds)[]) Object.assign(out[k], spec?.[k] ?? {});
  return out;
}

/** Seconds with a sensible number of digits for messages. */
export const secs = (s: number) => `${Number(s.toPrecision(4))} s`;
export const pct = (f: number) => `${Number((f * 100).toPrecision(3))} %`;
