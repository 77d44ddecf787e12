// Chooses how a WAV file's samples are decoded from its fmt chunk: the fast sample types where they fit, else PCM of any
// width or G.711; anything else is refused with its format named.
import { aLawDecoder, G711_BITS, muLawDecoder } from './g711.js';
import type { InterleavedLayout, SampleType } from './interleaved.js';
import { pcmDecoder } from './pcm.js';
import { checkChannelCount, RecordingError } from './recording.js';

// Format codes from the RIFF/WAVE specification and its registered extensions, named so a refusal says what the file is.
const FORMAT_NAMES: Record<number, string> = {
  0x0001: 'PCM', 0x0002: 'Microsoft ADPCM', 0x0003: 'IEEE float', 0x0006: 'A-law', 0x0007: 'µ-law',
  0x0011: 'IMA ADPCM', 0x0031: 'GSM 6.10', 0x0050: 'MPEG', 0x0055: 'MPEG Layer III', 0x00ff: 'AAC',
  0x0161: 'WMA', 0xf1ac: 'FLAC', 0xfffe: 'WAVE_FORMAT_EXTENSIBLE',
};
export const formatName = (code: number) => `0x${code.toString(16).padStart(4, '0')} (${FORMAT_NAMES[code] ?? 'unregistered'})`;

export interface FmtChunk { code: number; channels: number; sampleRate: number; blockAlign: number; bits: number; validBits: number; extensible: boolean }

export function parseFmt(b: Buffer, little: boolean, where: string): FmtChunk {
  if (b.length < 16) throw new RecordingError(`${where}: fmt chunk is ${b.length} bytes, shorter than the 16 the format requires; the header is damaged`);
  const u16 = (at: number) => (little ? b.readUInt16LE(at) : b.readUInt16BE(at));
  let code = u16(0);
  const bits = u16(14);
  let validBits = bits;
  const extensible = code === 0xfffe;
  if (extensible) {
    if (b.length < 40) throw new RecordingError(`${where}: WAVE_FORMAT_EXTENSIBLE fmt chunk is ${b.length} bytes, expected 40; the header is damaged`);
    validBits = u16(18) || bits;
    code = u16(24); // the sub-format GUID starts with the plain format code
  }
  return { code, channels: u16(2), sampleRate: little ? b.readUInt32LE(4) : b.readUInt32BE(4), blockAlign: u16(12), bits, validBits, extensible };
}

/** How the data chunk decodes: the layout fields for readInterleaved, the encoding's name and the resolution it carries. */
export interface WavEncoding { sampleType: SampleType; custom?: InterleavedLayout['custom']; encoding: string; bits: number | null; normalised: boolean }

const FAST_PCM: Record<number, SampleType> = { 1: 'uint8', 2: 'int16', 3: 'int24', 4: 'int32' };

/** `rightJustified`: PCM whose valid bits fill the containers' low end (see wav-justify.ts). */
export function wavEncoding(f: FmtChunk, little: boolean, where: string, rightJustified = false): WavEncoding {
  checkChannelCount(f.channels, where);
  const container = f.blockAlign / f.channels;
  if (!Number.isInteger(container) || container < 1) throw new RecordingError(`${where}: block align ${f.blockAlign} does not fit ${f.channels} channels of ${f.bits} bits; the header is damaged`);
  if (f.code === 1) {
    if (container > 8) throw new RecordingError(`${where}: PCM in ${container * 8}-bit containers is not supported (1 to 64 bits are); convert the file to 32-bit PCM or float`);
    const valid = f.validBits;
    if (valid < 1 || valid > container * 8) throw new RecordingError(`${where}: ${valid} valid bits do not fit ${container}-byte containers (block align ${f.blockAlign}, ${f.channels} channels); the header is damaged`);
    const encoding = valid === container * 8 ? `pcm${valid}` : `pcm${valid}in${container * 8}`;
    // Full containers of 1–4 bytes take the plain sample types (either byte order); the rest the general PCM decoder.
    if (valid === container * 8 && FAST_PCM[container]) return { sampleType: FAST_PCM[container], encoding, bits: valid, normalised: true };
    return { sampleType: 'int16', custom: { width: container, decode: pcmDecoder(container, valid, little, rightJustified) }, encoding, bits: valid, normalised: true };
  }
  if (f.code === 3) {
    if (container === 4) return { sampleType: 'float32', encoding: 'float32', bits: null, normalised: false };
    if (container === 8) return { sampleType: 'float64', encoding: 'float64', bits: null, normalised: false };
    throw new RecordingError(`${where}: IEEE float with ${container * 8} bits is not supported (32 or 64 are)`);
  }
  if (f.code === 6 || f.code === 7) {
    const law = f.code === 7 ? 'µ-law' : 'A-law';
    if (container !== 1) throw new RecordingError(`${where}: ${law} needs 1-byte samples but block align ${f.blockAlign} gives ${container} bytes for each of ${f.channels} channels; the header is damaged`);
    return { sampleType: 'uint8', custom: { width: 1, decode: f.code === 7 ? muLawDecoder : aLawDecoder }, encoding: law === 'µ-law' ? 'mulaw' : 'alaw', bits: G711_BITS[law], normalised: true };
  }
  throw new RecordingError(`${where}: WAV format code ${formatName(f.code)} is not supported; quern reads PCM, IEEE float and G.711 only and will not guess at compressed data: convert the file to PCM or float WAV`);
}
