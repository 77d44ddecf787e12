// G.711 companded samples (µ-law, A-law) decoded to linear values, normalised to ±1 of the linear full scale.
import type { SampleDecoder } from './interleaved.js';

// ITU-T G.711 (11/88), Table 2a: a µ-law character, bits inverted, holds sign, segment (3 bits) and step (4 bits);
// its decoder output is ±((2·step + 33) · 2^segment − 33) on a scale where 8159 is the top of the highest segment.
function muLaw(code: number): number {
  const u = ~code & 0xff;
  const segment = (u >> 4) & 7, step = u & 15;
  const magnitude = ((2 * step + 33) << segment) - 33;
  return u & 0x80 ? 0 - magnitude : magnitude; // 0 − 0 keeps the negative zero character at +0
}

// ITU-T G.711 (11/88), Table 1a: an A-law character, even bits inverted (XOR 0x55), holds sign, segment and step;
// its decoder output is (2·step + 1) for segment 0, else (2·step + 33) · 2^(segment − 1), on a scale where 4096 is full.
function aLaw(code: number): number {
  const a = code ^ 0x55;
  const segment = (a >> 4) & 7, step = a & 15;
  const magnitude = segment === 0 ? 2 * step + 1 : (2 * step + 33) << (segment - 1);
  return a & 0x80 ? magnitude : -magnitude;
}

/** Linear full scale of the decoded values: 8192 steps each way for µ-law (14 bits), 4096 for A-law (13 bits). */
export const G711_BITS = { 'µ-law': 14, 'A-law': 13 } as const;

const table = (decode: (code: number) => number, bits: number) => Float64Array.from({ length: 256 }, (_, c) => decode(c) / 2 ** (bits - 1));
const MU_LAW = table(muLaw, G711_BITS['µ-law']);
const A_LAW = table(aLaw, G711_BITS['A-law']);

export const muLawDecoder: SampleDecoder = (v, at) => MU_LAW[v.getUint8(at)];
export const aLawDecoder: SampleDecoder = (v, at) => A_LAW[v.getUint8(at)];
/** The decoded value of each of the 256 characters, in the standard's linear units (for tests and reports). */
export const g711Linear = { 'µ-law': muLaw, 'A-law': aLaw };
