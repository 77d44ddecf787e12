// The committed WebAssembly FFT kernels are what Debian's clang builds from their C source (scripts/build-fft-simd.ts).
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { buildModule } from '../../scripts/build-fft-simd.js';
import { requireTool } from './tools.js';

describe('stages/dsp/fft-simd.wasm.ts', () => {
  it('holds the module clang builds from stages/dsp/fft-simd.c', () => {
    const clang = requireTool('clang');
    requireTool('wasm-ld');
    const { bytes, compiler } = buildModule(clang);
    const committed = readFileSync(join(import.meta.dirname, '..', '..', 'stages', 'dsp', 'fft-simd.wasm.ts'), 'utf8');
    expect(committed, `rebuild with npm run build:wasm (${compiler})`).toContain(`FFT_SIMD_WASM = '${bytes.toString('base64')}'`);
    expect(committed).toContain(compiler);
  });
});
