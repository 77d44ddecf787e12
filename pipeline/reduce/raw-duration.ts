// A raw file's duration against its group's duration_s: a raw file says nothing about itself, so a wrong layout (channels,
// sample type) still reads as plausible channels, and the bytes making too many or too few frames is the one sign of it.
import { BYTES, type SampleType } from '../../stages/read/interleaved.js';
import type { RawLayout } from '../../stages/read/raw.js';

/** The largest channel count a suggestion tries (a larger one is seldom a raw capture's). */
const MAX_CHANNELS_TRIED = 64;

/** Layouts of the same header whose frames of the file's payload last the declared duration, within the tolerance: what was likely meant. */
export function fittingLayouts(payloadBytes: number, layout: RawLayout, sampleRate: number, declaredS: number, tolerance: number): string[] {
  const fits: string[] = [];
  const lasts = (channels: number, type: SampleType) => Math.floor(payloadBytes / (BYTES[type] * channels)) / sampleRate;
  const near = (s: number) => Math.abs(s - declaredS) <= tolerance * declaredS;
  for (let channels = 1; channels <= MAX_CHANNELS_TRIED; channels++) if (channels !== layout.channels && near(lasts(channels, layout.sample_type))) fits.push(`channels: ${channels}`);
  for (const type of Object.keys(BYTES) as SampleType[]) if (type !== layout.sample_type && near(lasts(layout.channels, type))) fits.push(`sample_type: ${type}`);
  return fits;
}

/**
 * Why a raw recording of `frames` frames is refused: it lasts more than `tolerance` (a fraction) off its group's declared
 * duration, which a wrong layout causes; null when it lasts as declared, or nothing is declared.
 */
export function rawDurationProblem(frames: number, sampleRate: number, layout: RawLayout, declaredS: number | null, tolerance: number, group: string): string | null {
  if (declaredS == null || !(declaredS > 0)) return null;
  const read = frames / sampleRate;
  if (Math.abs(read - declaredS) <= tolerance * declaredS) return null;
  const frameBytes = BYTES[layout.sample_type] * layout.channels;
  const fits = fittingLayouts(frames * frameBytes, layout, sampleRate, declaredS, tolerance);
  const likely = fits.length ? ` (the same bytes would last ${declaredS} s with ${fits.join(', or ')})` : '';
  return `raw layout: the file reads as ${read.toFixed(3)} s (${frames} frames of ${layout.channels} ${layout.sample_type} channel${layout.channels === 1 ? '' : 's'} after a ${layout.header_bytes}-byte header, at ${sampleRate} Hz) but group "${group}" declares duration_s: ${declaredS}; a wrong layout still reads as plausible channels, so check the group's layout.channels, layout.sample_type and layout.header_bytes against the logger's${likely}, or, if this group's captures vary in length, leave duration_s out`;
}
