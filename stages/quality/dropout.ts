// Dropout: missing values, stretches of exact zeros, gaps in a time column.
import type { Psd, WelchOptions } from '../dsp/welch.js';
import type { StageDefinition } from '../stage.js';
import { missingOf } from '../fused/missing.js';
import { spectrumOf } from '../spectrum.js';
import { zeroRunsOf } from '../fused/zero-runs.js';
import { noFiniteSamples, pct, secs, worst, type QualityThresholds, type Severity } from './flag.js';
import { widestStep } from '../read/time-steps.js';

/** How every figure treats missing samples (README, Missing samples), said with the flag so that it can be trusted. */
const TREATMENT = 'the figures are of the finite samples: statistics, window rows, time weighting and MTVV skip the missing ones, the spectra take only segments free of them (or, where none is whole, the longest stretch free of them), the envelope leaves out the filter\'s settling around each gap';

/** Share of the recording's samples the spectrum's periodograms span; null without a spectrum. */
const spectrumCoverage = (psd: Psd | null, n: number) => (psd?.covered != null && n > 0 ? psd.covered / n : null);

export const dropout: StageDefinition<QualityThresholds & { spectrum: WelchOptions }> = {
  group: 'quality',
  section: null,
  spectral: false,
  columns: () => [
    { name: 'missing_fraction', unit: '1', description: 'Fraction of samples missing or not finite.' },
    { name: 'zero_run_s', unit: 's', description: 'Longest stretch of exact zeros; null when the channel has no finite samples.' },
  ],
  create(ctx, q) {
    const gaps = missingOf(ctx), zeros = zeroRunsOf(ctx), spectrum = spectrumOf(ctx, q.spectrum);
    let n = 0;
    return {
      push(x) { n += x.length; },
      finish() {
        const missing = gaps.count, firstMissing = gaps.first, longest = zeros.longest, longestEnd = zeros.longestEnd;
        const fs = ctx.sampleRate, d = q.dropout;
        const fraction = n ? missing / n : 0;
        // No finite sample, so none was looked at for zeros: no stretch is null, not the 0 of a channel searched in vain.
        const zeroS = noFiniteSamples(n, n - missing) ? null : longest / fs, gapS = gaps.longest / fs;
        const steps = ctx.timeSteps();
        // The gaps may leave the spectrum (its gap-free segments, or its longest gap-free stretch) the lesser part of the recording.
        const psd = missing > 0 ? spectrum.psd() : null, coverage = spectrumCoverage(psd, n);
        const partial = psd != null && coverage != null && coverage < d.warn_spectrum_coverage;
        // Told only where the channel has figures from the spectrum, which the results' assembly knows (Flag.spectral): the
        // stored verdict then holds whatever spectral sections the spec turns on.
        const verdict = (spectral: boolean) => {
          const problems: string[] = [], why: string[] = [];
          let severity = 'ok' as Severity;
          const raise = (s: Severity) => { severity = worst([severity, s]); };
          if (missing > 0) {
            problems.push(`${missing} samples missing (${pct(fraction)}), first at ${secs(firstMissing / fs)}, the longest gap ${secs(gapS)} ending at ${secs((gaps.longestEnd + 1) / fs)}`);
            const share = fraction >= d.fail_missing_fraction || gapS >= d.fail_gap_s ? 'fail' : fraction >= d.warn_missing_fraction || gapS >= d.warn_gap_s ? 'warn' : 'note';
            raise(share);
            const told = spectral && partial;
            if (told) {
              problems.push(`the spectrum rests on ${pct(coverage!)} of the recording (${psd!.from !== undefined ? `its longest gap-free stretch, ${psd!.length} samples from ${secs(psd!.from / fs)}` : `${psd!.segments} gap-free segments of ${psd!.segment} samples`})`);
              raise('warn');
            }
            why.push(missing === n
              ? 'the channel has no finite samples: no figure of its signal can be computed, so those are empty (null), and the flags that judge the signal say not assessed'
              : share === 'note'
              ? `${TREATMENT}; so few and so short, they move ${told ? 'no other figure' : 'none'} by more than a fraction of a per cent`
              : `${TREATMENT}; with this many or this long, peaks, events and whole windows may be among them`);
            if (told) why.push('spectral figures describe only part of the recording (bands, octaves, velocity, dominant frequency, centroid, orders, LAeq\'s weighting shortfall, the kept spectrum)');
          }
          // A channel that is zeros from end to end is no logger's gap but a dead channel, which the flatline flag fails.
          const allZeros = n > 0 && longest === n;
          // A tacho channel from a digital input rests at exactly zero between pulses: there, zeros are the signal.
          if (allZeros && !ctx.tacho) {
            problems.push(`exact zeros for the whole recording (${secs(longest / fs)})`);
            raise('note');
            why.push('no data were lost between samples: the channel never moved, which the flatline flag judges (a dead or disconnected sensor)');
          } else if (zeroS != null && zeroS >= d.warn_zero_run_s && !ctx.tacho) {
            problems.push(`exact zeros for ${secs(zeroS)} ending at ${secs((longestEnd + 1) / fs)}`);
            raise('warn');
            why.push('zeros count as samples: they pull RMS, peak and the window figures down');
          }
          if (steps && steps.irregular > 0) {
            problems.push(`${steps.irregular} irregular time steps, ${widestStep(steps, secs)}`);
            raise('warn');
            why.push('uneven steps distort the spectrum');
          }
          return {
            severity,
            message: problems.length ? `${problems.join('; ')}: ${severity === 'note' ? '' : 'the logger lost data: '}${why.join('; ')}` : 'no missing samples, zero stretches or time gaps',
          };
        };
        const plain = verdict(false), withSpectrum = verdict(true);
        ctx.flag({
          name: 'dropout', ...plain, value: fraction,
          threshold: `note: any missing sample, or zeros for the whole recording (the flatline flag's); warn: ≥ ${pct(d.warn_missing_fraction)} missing, a gap of ≥ ${secs(d.warn_gap_s)}, the spectrum resting on < ${pct(d.warn_spectrum_coverage)} of the recording (on a channel with spectral figures), zeros for ≥ ${secs(d.warn_zero_run_s)} (not on a tacho channel), or an irregular time step; fail: ≥ ${pct(d.fail_missing_fraction)} missing or a gap of ≥ ${secs(d.fail_gap_s)}`,
          evidence: { missing, first_missing_s: firstMissing >= 0 ? firstMissing / fs : null, longest_gap_s: gapS, zero_run_s: zeroS, irregular_steps: steps?.irregular ?? null, ...(missing > 0 ? { spectrum_coverage: coverage } : {}) },
          ...(partial ? { spectral: withSpectrum } : {}),
        });
        return { missing_fraction: fraction, zero_run_s: zeroS };
      },
    };
  },
};
