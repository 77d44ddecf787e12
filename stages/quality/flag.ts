// A data-quality flag: a value held against a threshold, a severity, the evidence and the action to take.

export type Severity = 'ok' | 'warn' | 'fail';

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
}

const RANK: Record<Severity, number> = { ok: 0, warn: 1, fail: 2 };
export const worst = (severities: Severity[]): Severity => severities.reduce<Severity>((a, b) => (RANK[b] > RANK[a] ? b : a), 'ok');

/** Quality thresholds (spec section `quality`), each default with where it comes from. */
export interface QualityThresholds {
  saturation: { fail_fraction: number; fail_run: number };
  aliasing: { recommended_ratio: number; top_band: number; top_band_warn_fraction: number };
  resolution: { warn_snr_db: number; fail_snr_db: number };
  peak_capture: { warn_samples_per_cycle: number };
  flatline: { fail_steps: number; warn_run_s: number };
  dropout: { fail_missing_fraction: number; warn_zero_run_s: number };
  offset: { quantities: string[]; warn_ratio: number; warn_drift_ratio: number };
  spikes: { robust_sigmas: number; fail_fraction: number };
  declaration: { duration_tolerance: number };
}

export const QUALITY_DEFAULTS: QualityThresholds = {
  // Any sample at the range warns (common practice: clipped data says nothing beyond the range); failing at 1e-4 of the samples or a flat top of 3 samples is our choice.
  saturation: { fail_fraction: 1e-4, fail_run: 3 },
  // fs ≥ 2.56 × the highest frequency is common practice in vibration analysers; the top-band share (top 10 % of the band holding over 5 % of the power) is our choice.
  aliasing: { recommended_ratio: 2.56, top_band: 0.1, top_band_warn_fraction: 0.05 },
  // Signal-to-quantisation-noise against the ideal LSB/√12 (IEEE Std 1241); 40 dB (≈ 6.3 bits) and 20 dB (≈ 3 bits) are our choice.
  resolution: { warn_snr_db: 40, fail_snr_db: 20 },
  // About ten samples per cycle to see a waveform's shape (common practice).
  peak_capture: { warn_samples_per_cycle: 10 },
  // A spread of at most 2 converter steps is a dead channel; a constant stretch of 1 s is suspicious (our choices).
  flatline: { fail_steps: 2, warn_run_s: 1 },
  // Any missing sample warns; 1 % missing fails; exact zeros for 0.1 s warn (our choices).
  dropout: { fail_missing_fraction: 0.01, warn_zero_run_s: 0.1 },
  // Piezoelectric accelerometers and microphones pass no DC (common practice); half a standard deviation of mean or of drift warns (our choice).
  offset: { quantities: ['acceleration', 'sound_pressure'], warn_ratio: 0.5, warn_drift_ratio: 0.5 },
  // Isolated samples beyond 10 robust standard deviations (1.4826 × MAD) warn; 0.1 % of the samples fails (our choices).
  spikes: { robust_sigmas: 10, fail_fraction: 1e-3 },
  // A recording more than 1 % away from its declared duration warns (our choice).
  declaration: { duration_tolerance: 0.01 },
};

export type QualitySpec = { [K in keyof QualityThresholds]?: Partial<QualityThresholds[K]> };

export function thresholdsOf(spec: QualitySpec | undefined): QualityThresholds {
  const out = structuredClone(QUALITY_DEFAULTS);
  for (const k of Object.keys(out) as (keyof QualityThresholds)[]) Object.assign(out[k], spec?.[k] ?? {});
  return out;
}

/** Seconds with a sensible number of digits for messages. */
export const secs = (s: number) => `${Number(s.toPrecision(4))} s`;
export const pct = (f: number) => `${Number((f * 100).toPrecision(3))} %`;
