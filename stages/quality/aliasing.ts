// Aliasing: the declared highest frequency against the sample rate (sampling theorem), and power crowding the top of the band.
import { spectrumOf } from '../spectrum.js';
import { bandMeanSquare, resolutionOf, type Psd, type WelchOptions } from '../dsp/welch.js';
import type { StageDefinition } from '../stage.js';
import { pct, type QualityThresholds, type Severity } from './flag.js';
import { quantisationDensity } from './quantisation.js';

/** Where a tone at f lands when sampled at fs: |f − k·fs| for the nearest whole k (sampling theorem). */
export const aliasOf = (f: number, fs: number) => Math.abs(f - Math.round(f / fs) * fs);

/**
 * The strongest line at or above `from` Hz: the largest bin of the PSD there that stands above both neighbours (a peak, not the
 * skirt of content below `from`), its frequency k·df, known to the spectrum's resolution. Null where no bin there is a peak.
 */
export function strongestLineAbove(psd: Psd, from: number): number | null {
  const d = psd.density;
  let best = -1;
  for (let k = Math.max(1, Math.ceil(from / psd.df)); k < d.length; k++) {
    if (d[k] > d[k - 1] && (k + 1 === d.length || d[k] >= d[k + 1]) && (best < 0 || d[k] > d[best])) best = k;
  }
  return best < 0 ? null : best * psd.df;
}

/** A frequency for a message: six significant digits, no trailing zeros. */
const hz = (f: number) => Number(f.toPrecision(6));

export const aliasing: StageDefinition<QualityThresholds & { spectrum: WelchOptions }> = {
  group: 'quality',
  section: null,
  spectral: false,
  columns: () => [
    { name: 'alias_margin', unit: '1', description: 'Sample rate / declared highest frequency (2 is the sampling-theorem limit, 2.56 common practice).' },
    { name: 'alias_frequency_hz', unit: 'Hz', description: 'Where the declared highest frequency lands when sampled: |f − k·fs|.' },
    { name: 'top_band_power_fraction', unit: '1', description: 'Share of the signal power in the top of the band below Nyquist (top 10 % by default).' },
  ],
  create(ctx, q) {
    const s = spectrumOf(ctx, q.spectrum);
    return {
      push() {},
      finish() {
        const fs = ctx.sampleRate, f = ctx.maxFrequencyHz, a = q.aliasing;
        const psd = s.psd();
        const total = psd ? bandMeanSquare(psd, 0, fs / 2) : 0;
        const topFrom = (1 - a.top_band) * fs / 2;
        const top = psd && total > 0 ? bandMeanSquare(psd, topFrom, fs / 2) / total : null;
        const above = psd && total > 0 && f && f < fs / 2 ? bandMeanSquare(psd, f, fs / 2) / total : null;
        // Where the power above the band sits: its strongest line, and what it may have folded from (|f − k·fs|).
        const line = above != null ? strongestLineAbove(psd!, f!) : null, resolution = psd ? resolutionOf(psd) : null;
        // The chain's own noise, where declared, taken as spread evenly to Nyquist (white): the share it alone puts above
        // `from` is not content to warn of (a dead sensor's noise fills the top of the band; the noise_floor flag judges it).
        const floor = ctx.noiseFloor ?? null;
        const beyondNoise = (share: number | null, from: number) => share == null || floor == null ? share : Math.max(0, share - (floor * floor * (1 - from / (fs / 2))) / total);
        // A pulse train's edges spread power to Nyquist by design, and its speed rests on edge times: not judged on a tacho channel.
        const pulses = ctx.tacho != null;
        const topBeyond = pulses ? null : beyondNoise(top, topFrom), aboveBeyond = pulses ? null : f ? beyondNoise(above, f) : above;
        const noiseNote = floor != null ? ' beyond what the declared noise floor puts there' : '';
        // The converter's own floor, where its step is known: a share whose density is within a small factor of the ideal step's
        // q²/(6·fs) (IEEE Std 1241) is its noise, white to Nyquist, not content folded from above it.
        const step = ctx.stepSize ?? ctx.declaredGrid?.step ?? null;
        const floorDensity = psd && step != null && !pulses ? quantisationDensity(step, fs) : null;
        const overFloor = (from: number) => (floorDensity == null || from >= fs / 2 ? null : bandMeanSquare(psd!, from, fs / 2) / (fs / 2 - from) / floorDensity);
        const topOverFloor = overFloor(topFrom), aboveOverFloor = f ? overFloor(f) : null;
        const atFloor = (ratio: number | null) => ratio != null && ratio <= a.converter_floor_factor;
        const topWarns = topBeyond != null && topBeyond > a.top_band_warn_fraction;
        const aboveWarns = aboveBeyond != null && aboveBeyond > a.above_declared_warn_fraction;
        let severity: Severity = 'ok', message: string;
        const margin = f ? fs / f : null;
        // A declared alias-free bandwidth (the converter's data sheet) replaces the ratio common practice leaves an analogue filter.
        const aliasFree = ctx.aliasFreeFraction != null ? ctx.aliasFreeFraction * fs : null;
        const alias = f ? aliasOf(f, fs) : null;
        if (f && f >= fs / 2) {
          severity = 'fail';
          message = `declared content up to ${f} Hz but sampled at ${fs} Hz (Nyquist ${fs / 2} Hz): a ${f} Hz component appears at ${Number(alias!.toPrecision(6))} Hz; the capture cannot represent its content: resample at ${a.recommended_ratio} × ${f} = ${a.recommended_ratio * f} Hz or more`;
        } else if (f && aliasFree != null && f > aliasFree) {
          severity = 'warn';
          message = `declared content up to ${f} Hz, above the converter's alias-free bandwidth ${hz(aliasFree)} Hz (alias_free_fraction ${ctx.aliasFreeFraction} × ${fs} Hz): content between the two may be attenuated or folded; sample faster or lower max_frequency_hz`;
        } else if (f && aliasFree == null && fs < a.recommended_ratio * f) {
          severity = 'warn';
          message = `sampled at ${(fs / f).toFixed(2)} × the declared ${f} Hz, less than the ${a.recommended_ratio} × common practice leaves for the anti-alias filter: content near ${f} Hz may be attenuated or folded; where the converter's data sheet gives a wider alias-free bandwidth, declare alias_free_fraction`;
        } else if (topWarns && !atFloor(topOverFloor)) {
          severity = 'warn';
          message = `${pct(topBeyond)} of the power lies in the top ${pct(a.top_band)} of the band below Nyquist (${fs / 2} Hz)${noiseNote}: content above Nyquist may have folded into it; check the anti-alias filter or sample faster`;
        } else if (aboveWarns && !atFloor(aboveOverFloor)) {
          severity = 'warn';
          message = `${pct(aboveBeyond)} of the power lies above the declared highest frequency ${f} Hz, up to Nyquist (${fs / 2} Hz)${noiseNote}: content the declaration excludes, possibly folded from above Nyquist${line != null ? `; its strongest line lies at ${hz(line)} Hz (resolution ${hz(resolution!)} Hz), a component there or one folded from ${hz(fs - line)} or ${hz(fs + line)} Hz (fs ∓ it)` : ''}; RMS and peak include it (${aboveBeyond < 0.99 ? `RMS reads ${pct(1 / Math.sqrt(1 - aboveBeyond) - 1)} above the declared band's` : `the declared band holds ${aboveBeyond < 1 ? 'under 1 %' : 'none'} of the power`}); check the anti-alias filter and max_frequency_hz`;
        } else if (topWarns || aboveWarns) {
          severity = 'note';
          const share = topWarns ? `${pct(topBeyond!)} of the power lies in the top ${pct(a.top_band)} of the band below Nyquist (${fs / 2} Hz)` : `${pct(aboveBeyond!)} of the power lies above the declared highest frequency ${f} Hz`;
          const ratio = topWarns ? topOverFloor! : aboveOverFloor!;
          message = `${share}, at ${ratio.toFixed(1)} × the density of the converter's own quantisation noise (step²/(6·fs), within ${a.converter_floor_factor} ×): the converter's noise, white to Nyquist, not content folded from above it; the channel varies by little more than its steps (see resolution)`;
        } else {
          const pulseNote = pulses ? '; the power of a pulse train\'s edges, which reaches Nyquist by design, is not judged on a tacho channel' : '';
          message = (!f ? `no highest frequency declared${pulses ? '' : '; top of the band is quiet'}`
            : aliasFree != null ? `sampled at ${(fs / f).toFixed(2)} × the declared highest frequency ${f} Hz, within the converter's alias-free bandwidth ${hz(aliasFree)} Hz`
            : `sampled at ${(fs / f).toFixed(2)} × the declared highest frequency ${f} Hz`) + pulseNote;
        }
        ctx.flag({
          name: 'aliasing', severity, value: margin,
          threshold: `fail: declared highest frequency ≥ fs/2; warn: ${aliasFree != null ? `it exceeds the declared alias-free bandwidth (${ctx.aliasFreeFraction} × fs)` : `fs < ${a.recommended_ratio} × it`}, > ${pct(a.top_band_warn_fraction)} of the power in the top ${pct(a.top_band)} of the band, or > ${pct(a.above_declared_warn_fraction)} above the declared highest frequency${pulses ? ' (these two not on a tacho channel)' : ''}${floor != null ? ' (each beyond the declared noise floor\'s share, spread evenly to Nyquist)' : ''}${floorDensity != null ? `, unless its density is within ${a.converter_floor_factor} × the converter's quantisation noise, step²/(6·fs)` : ''}`,
          evidence: {
            declared_hz: f, sample_rate: fs, alias_hz: alias, top_band_power_fraction: top, above_declared_power_fraction: above,
            ...(above != null ? { strongest_above_band_hz: line, spectrum_resolution_hz: resolution } : {}),
            ...(aliasFree != null ? { alias_free_hz: aliasFree } : {}),
            ...(floor != null ? { top_band_beyond_noise_fraction: topBeyond, above_declared_beyond_noise_fraction: aboveBeyond } : {}),
            ...(floorDensity != null ? { converter_floor_density: floorDensity, top_band_over_converter_floor: topOverFloor, above_declared_over_converter_floor: aboveOverFloor } : {}),
          },
          message,
        });
        return { alias_margin: margin, alias_frequency_hz: alias, top_band_power_fraction: top };
      },
    };
  },
};
