// What the file's own header says against the declaration, where neither stops the recording: notes for run.json and check.
import type { ChannelDeclaration } from '../../spec/archive.js';
import type { Recording } from '../../stages/read/recording.js';

/**
 * The converter bits a channel's steps are taken at: the declared ones, but never finer than the integer codes the file
 * holds (no step finer than the file's can be in it; a 12-bit converter in 16-bit codes keeps its 12), else the file's.
 */
export function effectiveBits(declared: number | null | undefined, file: Pick<Recording, 'bits' | 'normalised'>): number | null {
  if (declared == null) return file.bits;
  return file.normalised && file.bits != null ? Math.min(declared, file.bits) : declared;
}

/** Channels declaring more converter bits than the file's integer codes hold: one note for each declared width. */
export function widerBitsNotes(decls: ChannelDeclaration[], file: Pick<Recording, 'bits' | 'normalised'>, group: string): string[] {
  if (!file.normalised || file.bits == null) return [];
  const byBits = new Map<number, string[]>();
  for (const d of decls) if (d.bits != null && d.bits > file.bits) (byBits.get(d.bits) ?? byBits.set(d.bits, []).get(d.bits)!).push(d.name);
  return [...byBits].map(([bits, names]) => `${names.length === 1 ? 'channel' : 'channels'} ${names.join(', ')} declare${names.length === 1 ? 's' : ''} bits: ${bits}, but the file holds ${file.bits}-bit samples: no step finer than the file's can be in it, so its ${file.bits} bits are used (the converter step, the saturation limits and the resolution flag); declare bits: ${file.bits} in archive.yaml group "${group}", or check that the capture was not saved at a lower resolution than the converter's`);
}

/**
 * The lowest sample rates at which a channel of these quantities is captured in practice: an accelerometer's or a
 * microphone's band, and a tacho's pulses, lie well above 5 Hz (our choice). A slower rate from a time column whose header
 * names no unit is most likely milliseconds read as seconds; slow channels (temperature, strain at 1 Hz) are real, so it is a note.
 */
export const LOWEST_PLAUSIBLE_HZ: Readonly<Record<string, number>> = { acceleration: 10, sound_pressure: 10, tacho: 10 };

/** A note when the time column was read as seconds on trust and gives a rate too low for the channels declared on it. */
export function slowTimeColumnNote(decls: ChannelDeclaration[], rec: Pick<Recording, 'secondsAssumed' | 'sampleRate'>, lowest = LOWEST_PLAUSIBLE_HZ): string | null {
  if (rec.secondsAssumed == null) return null;
  const kinds = [...new Set(decls.map((d) => (d.pulses_per_rev ? 'tacho' : d.quantity)).filter((k) => lowest[k] != null && rec.sampleRate < lowest[k]))];
  if (!kinds.length) return null;
  return `the time column "${rec.secondsAssumed}" names no unit, so it was read as seconds, giving ${Number(rec.sampleRate.toPrecision(6))} Hz: too slow for ${kinds.join(', ')} (under ${Math.min(...kinds.map((k) => lowest[k]))} Hz); if it holds milliseconds, name it time_ms in the header (or time_us, time_ns), or export the file without it and declare sample_rate for the group in archive.yaml`;
}

/** The notes a recording's header gives against its declared channels. */
export const headerNotes = (decls: ChannelDeclaration[], rec: Recording, group: string): string[] =>
  [...widerBitsNotes(decls, rec, group), slowTimeColumnNote(decls, rec)].filter((n): n is string => n != null);
