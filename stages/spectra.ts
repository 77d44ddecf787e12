// Keeps each channel's averaged Welch spectrum with the recording's stored result, packed as float32, so that spectra of
// past recordings can be overlaid later (spectra.parquet, the trend pictures) without reading the recordings again.
import type { WelchOptions } from './dsp/welch.js';
import { spectrumOf } from './spectrum.js';
import type { KeptValue, StageDefinition } from './stage.js';

/** A kept spectrum: bin k is at k·df Hz, density in unit²/Hz. */
export interface KeptSpectrum { df: number; segments: number; density: Float32Array }

/** Little-endian float32 values as base64 text: 4 bytes a bin in memory, about 5.3 in JSON. */
export function packFloats(values: ArrayLike<number>): string {
  const f = Float32Array.from(values as ArrayLike<number>);
  return Buffer.from(f.buffer, f.byteOffset, f.byteLength).toString('base64');
}

export function unpackFloats(text: string): Float32Array {
  const bytes = Buffer.from(text, 'base64');
  // Copied into a fresh buffer: base64 decoding gives no 4-byte alignment.
  return new Float32Array(bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength));
}

export function unpackSpectrum(v: KeptValue | null | undefined): KeptSpectrum | null {
  if (!v || typeof v.density !== 'string' || typeof v.df !== 'number') return null;
  return { df: v.df, segments: Number(v.segments), density: unpackFloats(v.density) };
}

export const keptSpectrum: StageDefinition<WelchOptions> = {
  group: 'spectrum',
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
