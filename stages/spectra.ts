// Keeps each channel's averaged Welch spectrum with the recording's stored result, packed as float32, so that spectra of
// past recordings can be overlaid later (spectra.parquet, the trend pictures) without reading the recordings again.
import type { WelchOptions } from './dsp/welch.js';
import { spectrumOf } from './spectrum.js';
import type { KeptValue, StageDefinition } from './stage.js';

/** A kept spectrum: bin k is at k·df Hz, density in unit²/Hz. */
export interface KeptSpectrum { df: number; segments: number; density: Float32Array }

/**
 * Values kept as float32 with a stored result: 4 bytes a value, stored as raw bytes beside the result's JSON. Entries
 * stored before held them as base64 text of the same little-endian bytes, which still reads.
 */
export type PackedFloats = Float32Array | string;

export const packFloats = (values: ArrayLike<number>): Float32Array => Float32Array.from(values);

export function unpackFloats(packed: PackedFloats): Float32Array {
  if (typeof packed !== 'string') return packed;
  const bytes = Buffer.from(packed, 'base64');
  // Copied into a fresh buffer: base64 decoding gives no 4-byte alignment.
  return new Float32Array(bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength));
}

const isPacked = (v: unknown): v is PackedFloats => typeof v === 'string' || v instanceof Float32Array;

export function unpackSpectrum(v: KeptValue | null | undefined): KeptSpectrum | null {
  if (!v || !isPacked(v.density) || typeof v.df !== 'number') return null;
  return { df: v.df, segments: Number(v.segments), density: unpackFloats(v.density) };
}

export const keptSpectrum: StageDefinition<WelchOptions> = {
  group: 'spectrum',
  section: 'spectrum',
  spectral: true,
  columns: () => [],
  create(ctx, o) {
    const s = spectrumOf(ctx, o);
    return {
      push() {},
      finish() {
        const psd = s.psd();
        if (psd) ctx.keep?.('spectrum', { df: psd.df, segments: psd.segments, density: packFloats(psd.density) });
        return {};
      },
    };
  },
};
